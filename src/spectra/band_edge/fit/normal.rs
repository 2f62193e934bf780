//! The arithmetic of one band-edge fit step: the Gaussian columns by ratio recurrence, the
//! Jacobian's products (side by side in AVX registers where the CPU has them, bit for bit the
//! one-at-a-time dot products), the weighted residuals, and the Cholesky factor and solve of
//! the small normal matrices.

use super::{G, Scratch, Window};

/// Cholesky factor (lower, in place) of a symmetric positive-definite n x n matrix; false
/// when it is not positive definite. The normal matrices of the fit are, and this costs half
/// a pivoted elimination.
pub(super) fn cholesky_in_place(a: &mut [f64], n: usize) -> bool {
    // The fit's normal matrix is always 8 x 8 (a line and two Gaussians) and its linear start
    // 4 x 4: with the size known the compiler drops the index checks and unrolls, and the
    // operations stay the same ones in the same order.
    match n {
        8 => cholesky_fixed::<8>(a),
        4 => cholesky_fixed::<4>(a),
        _ => cholesky_any(a, n),
    }
}

fn cholesky_fixed<const N: usize>(a: &mut [f64]) -> bool {
    cholesky_any(&mut a[..N * N], N)
}

#[inline(always)]
fn cholesky_any(a: &mut [f64], n: usize) -> bool {
    for j in 0..n {
        let mut d = a[j * n + j];
        for k in 0..j {
            d -= a[j * n + k] * a[j * n + k];
        }
        if !(d > 0.0) || !d.is_finite() {
            return false;
        }
        let d = d.sqrt();
        a[j * n + j] = d;
        for i in j + 1..n {
            let mut v = a[i * n + j];
            for k in 0..j {
                v -= a[i * n + k] * a[j * n + k];
            }
            a[i * n + j] = v / d;
        }
    }
    true
}

/// Solves L Lᵀ x = b in place with the factor from [`cholesky_in_place`].
pub(super) fn cholesky_solve(l: &[f64], b: &mut [f64], n: usize) -> bool {
    match n {
        8 => cholesky_solve_fixed::<8>(l, b),
        4 => cholesky_solve_fixed::<4>(l, b),
        _ => cholesky_solve_any(l, b, n),
    }
}

fn cholesky_solve_fixed<const N: usize>(l: &[f64], b: &mut [f64]) -> bool {
    cholesky_solve_any(&l[..N * N], &mut b[..N], N)
}

#[inline(always)]
fn cholesky_solve_any(l: &[f64], b: &mut [f64], n: usize) -> bool {
    for i in 0..n {
        let mut v = b[i];
        for k in 0..i {
            v -= l[i * n + k] * b[k];
        }
        b[i] = v / l[i * n + i];
    }
    for i in (0..n).rev() {
        let mut v = b[i];
        for k in i + 1..n {
            v -= l[k * n + i] * b[k];
        }
        b[i] = v / l[i * n + i];
    }
    b.iter().all(|v| v.is_finite())
}

/// exp(-(eᵢ - c)²/2σ²) at eᵢ = e0 + i·h. On an even grid each point's value is the last one's
/// times a ratio, and each ratio the last one's times exp(-h²/σ²): four exponentials a column
/// instead of one a point (the exponential was most of the fit's cost). The walk starts at the
/// point nearest the centre and moves away from it, so values only shrink: nothing overflows,
/// an underflow is a true zero, and the rounding carried over a window (under 200 points) stays
/// near 1e-14.
pub(crate) fn gaussian_column(e0: f64, h: f64, c: f64, sigma: f64, out: &mut [f64]) {
    let m = out.len();
    if m == 0 {
        return;
    }
    let d = h / sigma;
    let q = (-d * d).exp();
    let k = ((c - e0) / h).round().clamp(0.0, (m - 1) as f64) as usize;
    let zk = (e0 + k as f64 * h - c) / sigma;
    let gk = (-0.5 * zk * zk).exp();
    out[k] = gk;
    let (mut g, mut r) = (gk, (-zk * d - 0.5 * d * d).exp());
    for v in &mut out[k + 1..] {
        g *= r;
        r *= q;
        *v = g;
    }
    let (mut g, mut r) = (gk, (zk * d - 0.5 * d * d).exp());
    for v in out[..k].iter_mut().rev() {
        g *= r;
        r *= q;
        *v = g;
    }
}

/// Weighted normal equations JᵀWJ and JᵀW r at p; returns χ².
pub(super) fn normal_equations(win: &Window, p: &[f64], jtj: &mut [f64], jtr: &mut [f64], sc: &mut Scratch) -> f64 {
    let chi2 = residuals(win, p, sc);
    jacobian_products(win, p, jtj, jtr, sc);
    chi2
}

/// JᵀWJ and JᵀW r at p, from the residuals and Gaussian columns [`residuals`] left in `sc`
/// for the same p (an accepted step has just computed them). The Jacobian is built column by
/// column so every entry of JᵀWJ is one dot product of contiguous columns; each column is
/// weighted once, not once for every product it enters.
pub(super) fn jacobian_products(win: &Window, p: &[f64], jtj: &mut [f64], jtr: &mut [f64], sc: &mut Scratch) {
    #[cfg(target_arch = "x86_64")]
    {
        if std::is_x86_feature_detected!("avx") {
            // SAFETY: `jacobian_products_avx` only needs AVX, which the CPU was checked just
            // above to have; that is all its `target_feature` attribute requires of its caller.
            unsafe { jacobian_products_avx(win, p, jtj, jtr, sc) };
            return;
        }
    }
    jacobian_products_with(win, p, jtj, jtr, sc, |x, ys, out| {
        for (o, y) in out.iter_mut().zip(ys) {
            *o = dot(x, y);
        }
    });
}

/// The same with the columns built and the products run in AVX registers: the same
/// operations in the same order (no fused multiply-add is enabled), so the same bits.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx")]
fn jacobian_products_avx(win: &Window, p: &[f64], jtj: &mut [f64], jtr: &mut [f64], sc: &mut Scratch) {
    jacobian_products_with(win, p, jtj, jtr, sc, |x, ys, out| lanes::products(x, ys, out));
}

#[inline(always)]
fn jacobian_products_with(
    win: &Window,
    p: &[f64],
    jtj: &mut [f64],
    jtr: &mut [f64],
    sc: &mut Scratch,
    products: impl Fn(&[f64], &[&[f64]], &mut [f64]),
) {
    jacobian_columns(win, p, sc);
    let np = p.len();
    let m = win.len();
    let (jac, res, weighted) = (&sc.jac[..], &sc.res[..], &mut sc.weighted);
    // Row a of the products takes the residual and columns a..np against weighted column a.
    // The fit has 8 parameters; room for 15 keeps the rows off the heap.
    const ROOM: usize = 16;
    let mut row: [&[f64]; ROOM] = [&[]; ROOM];
    let mut out = [0.0f64; ROOM];
    for a in 0..np {
        let ja = &jac[a * m..(a + 1) * m];
        for ((o, x), w) in weighted.iter_mut().zip(ja).zip(win.w) {
            *o = x * w;
        }
        let count = np - a + 1;
        if count > ROOM {
            jtr[a] = dot(weighted, res);
            for b in a..np {
                let v = dot(weighted, &jac[b * m..(b + 1) * m]);
                jtj[a * np + b] = v;
                jtj[b * np + a] = v;
            }
            continue;
        }
        row[0] = res;
        for (slot, col) in row[1..count].iter_mut().zip(jac[a * m..].chunks_exact(m)) {
            *slot = col;
        }
        let out = &mut out[..count];
        products(weighted, &row[..count], out);
        jtr[a] = out[0];
        for (j, v) in out[1..].iter().enumerate() {
            let b = a + j;
            jtj[a * np + b] = *v;
            jtj[b * np + a] = *v;
        }
    }
}

/// The Jacobian at p, one contiguous column of `len()` values per parameter, into `sc.jac`.
#[inline(always)]
fn jacobian_columns(win: &Window, p: &[f64], sc: &mut Scratch) {
    let np = p.len();
    let m = win.len();
    sc.jac.resize(np * m, 0.0);
    sc.weighted.resize(m, 0.0);
    let (jac, cols) = (&mut sc.jac, &sc.cols);
    let (c0, rest) = jac.split_at_mut(m);
    let (c1, rest) = rest.split_at_mut(m);
    c0.fill(1.0);
    c1.copy_from_slice(&win.x);
    for (k, q) in p[G..].chunks_exact(3).enumerate() {
        let g = &cols[k * m..(k + 1) * m];
        let (ca, rest2) = rest[3 * k * m..].split_at_mut(m);
        let (cc, cs) = rest2.split_at_mut(m);
        let inv = 1.0 / q[2];
        ca.copy_from_slice(g);
        let (cc, cs, e) = (&mut cc[..m], &mut cs[..m], &win.e[..m]);
        for i in 0..m {
            let z = (e[i] - q[1]) * inv;
            let ag = q[0] * g[i];
            cc[i] = ag * z * inv;
            cs[i] = ag * z * z * inv;
        }
    }
}

/// The fit's dot products in AVX registers: lane j of a register is running sum j of [`dot`].
#[cfg(target_arch = "x86_64")]
pub(crate) mod lanes {
    use std::arch::x86_64::*;

    #[inline]
    #[target_feature(enable = "avx")]
    fn load(x: &[f64; 4]) -> __m256d {
        _mm256_set_pd(x[3], x[2], x[1], x[0])
    }

    /// (s₀ + s₁) + (s₂ + s₃) + tail, as [`super::dot`] ends.
    #[inline]
    #[target_feature(enable = "avx")]
    fn finish(s: __m256d, tail: f64) -> f64 {
        let lo = _mm256_castpd256_pd128(s);
        let hi = _mm256_extractf128_pd::<1>(s);
        let s01 = _mm_cvtsd_f64(lo) + _mm_cvtsd_f64(_mm_unpackhi_pd(lo, lo));
        let s23 = _mm_cvtsd_f64(hi) + _mm_cvtsd_f64(_mm_unpackhi_pd(hi, hi));
        (s01 + s23) + tail
    }

    #[inline]
    #[target_feature(enable = "avx")]
    fn tail(x: &[f64], y: &[f64]) -> f64 {
        x.iter().zip(y).map(|(x, z)| x * z).sum()
    }

    /// `out[t] = dot(x, ys[t])`, four targets at a time; every target at least as long as x.
    #[target_feature(enable = "avx")]
    pub(crate) fn products(x: &[f64], ys: &[&[f64]], out: &mut [f64]) {
        let m = x.len();
        let (cx, tx) = x.as_chunks::<4>();
        let nc = cx.len();
        let mut t = 0;
        while t + 4 <= ys.len() {
            let (y0, y1, y2, y3) = (&ys[t][..m], &ys[t + 1][..m], &ys[t + 2][..m], &ys[t + 3][..m]);
            let (c0, c1, c2, c3) = (
                &y0.as_chunks::<4>().0[..nc],
                &y1.as_chunks::<4>().0[..nc],
                &y2.as_chunks::<4>().0[..nc],
                &y3.as_chunks::<4>().0[..nc],
            );
            let mut s = [_mm256_setzero_pd(); 4];
            for i in 0..nc {
                let xv = load(&cx[i]);
                s[0] = _mm256_add_pd(s[0], _mm256_mul_pd(xv, load(&c0[i])));
                s[1] = _mm256_add_pd(s[1], _mm256_mul_pd(xv, load(&c1[i])));
                s[2] = _mm256_add_pd(s[2], _mm256_mul_pd(xv, load(&c2[i])));
                s[3] = _mm256_add_pd(s[3], _mm256_mul_pd(xv, load(&c3[i])));
            }
            out[t] = finish(s[0], tail(tx, &y0[4 * nc..]));
            out[t + 1] = finish(s[1], tail(tx, &y1[4 * nc..]));
            out[t + 2] = finish(s[2], tail(tx, &y2[4 * nc..]));
            out[t + 3] = finish(s[3], tail(tx, &y3[4 * nc..]));
            t += 4;
        }
        // The last few one at a time: they overlap with the next row's work anyway.
        while t < ys.len() {
            let y = &ys[t][..m];
            let c = &y.as_chunks::<4>().0[..nc];
            let mut s = _mm256_setzero_pd();
            for i in 0..nc {
                s = _mm256_add_pd(s, _mm256_mul_pd(load(&cx[i]), load(&c[i])));
            }
            out[t] = finish(s, tail(tx, &y[4 * nc..]));
            t += 1;
        }
    }
}

/// Σ aᵢ bᵢ in four independent sums (so it vectorises and pipelines).
#[inline(always)]
pub(crate) fn dot(a: &[f64], b: &[f64]) -> f64 {
    let mut s = [0.0f64; 4];
    let n = a.len().min(b.len());
    let (ca, ta) = a[..n].as_chunks::<4>();
    let (cb, tb) = b[..n].as_chunks::<4>();
    for (x, z) in ca.iter().zip(cb) {
        for j in 0..4 {
            s[j] += x[j] * z[j];
        }
    }
    let tail: f64 = ta.iter().zip(tb).map(|(x, z)| x * z).sum();
    (s[0] + s[1]) + (s[2] + s[3]) + tail
}

/// The model minus the data at every point of the window (into `sc.res`, with the Gaussian
/// columns in `sc.cols`); returns the weighted χ².
pub(super) fn residuals(win: &Window, p: &[f64], sc: &mut Scratch) -> f64 {
    let m = win.len();
    win.columns(p, &mut sc.cols);
    sc.res.resize(m, 0.0);
    // Column by column, each point's sum still in the order background, first Gaussian, next.
    let res = &mut sc.res[..m];
    for (r, x) in res.iter_mut().zip(&win.x) {
        *r = p[0] + p[1] * x;
    }
    for (k, col) in sc.cols.chunks_exact(m).enumerate() {
        let a = p[G + 3 * k];
        for (r, g) in res.iter_mut().zip(col) {
            *r += a * g;
        }
    }
    for (r, y) in res.iter_mut().zip(win.y) {
        *r -= y;
    }
    res.iter().zip(win.w).map(|(r, w)| w * r * r).sum()
}
