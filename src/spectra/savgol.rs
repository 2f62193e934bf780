//! Savitzky-Golay smoothing and derivatives (Savitzky & Golay, Anal. Chem. 36, 1627 (1964);
//! tables corrected by Steinier, Termonia & Deltour, Anal. Chem. 44, 1906 (1972)).
//! Coefficients are computed by least squares rather than copied from the tables, so any
//! window and order work; the tests check them against the published tables. Near the ends of
//! the data the same fitted polynomial is evaluated off-centre instead of padding with invented
//! values.

use crate::error::{Result, invalid};

/// Convolution weights for a window of `2m+1` points, polynomial `order`, derivative `deriv`,
/// evaluated at offset `t` from the window centre (t = 0 is the tables' case). The weights
/// give the derivative per unit of point spacing.
pub fn coefficients_at(half: usize, order: usize, deriv: usize, t: f64) -> Result<Vec<f64>> {
    let n = 2 * half + 1;
    if order >= n {
        return invalid(format!(
            "Savitzky-Golay order {order} needs a window above {order} points"
        ));
    }
    if deriv > order {
        return invalid(format!(
            "derivative {deriv} needs a polynomial of order {deriv} or more"
        ));
    }
    let k = order + 1;
    // Normal matrix A = JᵀJ with J[i][p] = z_i^p, z_i = i - half.
    let z: Vec<f64> = (0..n).map(|i| i as f64 - half as f64).collect();
    let mut a = vec![vec![0.0; k]; k];
    for zi in &z {
        for p in 0..k {
            for q in 0..k {
                a[p][q] += zi.powi((p + q) as i32);
            }
        }
    }
    // Row vector: d^deriv/dt^deriv of [1, t, t², ...] at t.
    let mut dv = vec![0.0; k];
    for (p, v) in dv.iter_mut().enumerate().skip(deriv) {
        let falling: f64 = ((p - deriv + 1)..=p).map(|f| f as f64).product();
        *v = falling * t.powi((p - deriv) as i32);
    }
    // Solve A w = dv (A symmetric positive definite), then c_i = Σ_p w_p z_i^p.
    let w = solve(a, dv)?;
    Ok(z.iter()
        .map(|zi| (0..k).map(|p| w[p] * zi.powi(p as i32)).sum())
        .collect())
}

/// The tables' centred weights.
pub fn coefficients(half: usize, order: usize, deriv: usize) -> Result<Vec<f64>> {
    Ok(window_rows(half, order, deriv)?.rows[half].clone())
}

fn solve(mut a: Vec<Vec<f64>>, mut b: Vec<f64>) -> Result<Vec<f64>> {
    let n = b.len();
    for col in 0..n {
        let piv = (col..n)
            .max_by(|&i, &j| a[i][col].abs().total_cmp(&a[j][col].abs()))
            .unwrap_or(col);
        if a[piv][col].abs() < 1e-300 {
            return invalid("Savitzky-Golay normal matrix is singular");
        }
        a.swap(col, piv);
        b.swap(col, piv);
        for r in 0..n {
            if r != col {
                let f = a[r][col] / a[col][col];
                for c in col..n {
                    a[r][c] -= f * a[col][c];
                }
                b[r] -= f * b[col];
            }
        }
    }
    Ok((0..n).map(|i| b[i] / a[i][i]).collect())
}

/// The weights of one window for every evaluation point, and the end rows again laid out for
/// computing the outputs near each end side by side.
struct Window {
    /// `rows[h]` evaluates at offset `h - half` from the window centre (t = -half..=half).
    rows: Vec<Vec<f64>>,
    /// `left[p * half + i] = rows[i][p]`: the first `half` outputs, weight `p` of each together.
    left: Vec<f64>,
    /// `right[p * half + r] = rows[half + 1 + r][p]`: the last `half` outputs likewise.
    right: Vec<f64>,
}

/// The weights for every evaluation point of a window (t = -half..=half), computed once per
/// (half, order, deriv) and kept for the thread: analysis of many spectra reuses them.
fn window_rows(half: usize, order: usize, deriv: usize) -> Result<std::rc::Rc<Window>> {
    use std::cell::RefCell;
    use std::collections::HashMap;
    use std::rc::Rc;
    thread_local! {
        static CACHE: RefCell<HashMap<(usize, usize, usize), Rc<Window>>> = RefCell::new(HashMap::new());
    }
    if let Some(r) = CACHE.with(|c| c.borrow().get(&(half, order, deriv)).cloned()) {
        return Ok(r);
    }
    let rows: Vec<Vec<f64>> = (0..=2 * half)
        .map(|i| coefficients_at(half, order, deriv, i as f64 - half as f64))
        .collect::<Result<_>>()?;
    let w = 2 * half + 1;
    let mut left = vec![0.0; w * half];
    let mut right = vec![0.0; w * half];
    for p in 0..w {
        for i in 0..half {
            left[p * half + i] = rows[i][p];
            right[p * half + i] = rows[half + 1 + i][p];
        }
    }
    let window = Rc::new(Window { rows, left, right });
    CACHE.with(|c| c.borrow_mut().insert((half, order, deriv), window.clone()));
    Ok(window)
}

/// The outputs near one end, `out[i] = Σ_p weights[p * out.len() + i] · y[p] · scale`, each
/// summed in the order of `p` from -0.0 (what `Iterator::sum` does for f64), so each equals
/// `rows[..].iter().zip(y).map(|(c, v)| c * v).sum::<f64>() * scale` bit for bit; the outputs
/// are independent lanes, so the compiler may compute several at once.
fn ends(weights: &[f64], y: &[f64], scale: f64, out: &mut [f64]) {
    let lanes = out.len();
    out.fill(-0.0);
    if lanes == 0 {
        return;
    }
    for (wp, &yp) in weights.chunks_exact(lanes).zip(y) {
        for (o, c) in out.iter_mut().zip(wp) {
            *o += c * yp;
        }
    }
    for o in out.iter_mut() {
        *o *= scale;
    }
}

/// A dot product with four running sums, so the compiler can keep several multiply-adds in
/// flight; the order of summation differs from a plain loop only by rounding.
fn dot(a: &[f64], b: &[f64]) -> f64 {
    let mut acc = [0.0f64; 4];
    let (ca, ra) = a.split_at(a.len() - a.len() % 4);
    let (cb, rb) = b.split_at(ca.len());
    for (x, y) in ca.chunks_exact(4).zip(cb.chunks_exact(4)) {
        acc[0] += x[0] * y[0];
        acc[1] += x[1] * y[1];
        acc[2] += x[2] * y[2];
        acc[3] += x[3] * y[3];
    }
    let mut t = (acc[0] + acc[1]) + (acc[2] + acc[3]);
    for (x, y) in ra.iter().zip(rb) {
        t += x * y;
    }
    t
}

/// Outputs computed side by side in one pass of the window: lane `j` of a block is output
/// `j` of the block.
const LANES: usize = 8;

/// The full-window outputs: `out[j] = dot(c, y[j..j + c.len()]) * scale` for every `j`, each
/// bit for bit what [`dot`] gives. Eight neighbouring outputs are computed together, each lane
/// doing exactly the operations of `dot` in the same order (four running sums over the window
/// in steps of four, summed pairwise, then the remainder, then the scale), so the compiler can
/// put the outputs in vector registers without changing a single rounding. With AVX (checked
/// at run time) four lanes are one instruction; the same code without it is the portable
/// fallback. No fused multiply-add is enabled: it would round differently.
fn interior(c: &[f64], y: &[f64], scale: f64, out: &mut [f64]) {
    #[cfg(target_arch = "x86_64")]
    {
        if std::is_x86_feature_detected!("avx") {
            // SAFETY: `interior_avx` only differs from `interior_lanes` by being compiled
            // for AVX; the CPU was checked just above to have AVX, which is all that the
            // `target_feature` attribute requires of its caller.
            unsafe { interior_avx(c, y, scale, out) };
            return;
        }
    }
    interior_lanes(c, y, scale, out);
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx")]
fn interior_avx(c: &[f64], y: &[f64], scale: f64, out: &mut [f64]) {
    interior_lanes(c, y, scale, out);
}

#[inline(always)]
fn interior_lanes(c: &[f64], y: &[f64], scale: f64, out: &mut [f64]) {
    let w = c.len();
    let c4 = w - w % 4;
    let blocks = out.len() / LANES;
    for (b, o) in out[..blocks * LANES].chunks_exact_mut(LANES).enumerate() {
        let j0 = b * LANES;
        // The window of every lane: lane j reads ys[p + j] for p in 0..w.
        let ys = &y[j0..j0 + w + LANES - 1];
        let mut acc = [[0.0f64; LANES]; 4];
        for m in (0..c4).step_by(4) {
            for (k, a) in acc.iter_mut().enumerate() {
                let ck = c[m + k];
                let win = &ys[m + k..m + k + LANES];
                for j in 0..LANES {
                    a[j] += ck * win[j];
                }
            }
        }
        let mut t = [0.0f64; LANES];
        for j in 0..LANES {
            t[j] = (acc[0][j] + acc[1][j]) + (acc[2][j] + acc[3][j]);
        }
        for p in c4..w {
            let cp = c[p];
            let win = &ys[p..p + LANES];
            for j in 0..LANES {
                t[j] += cp * win[j];
            }
        }
        for j in 0..LANES {
            o[j] = t[j] * scale;
        }
    }
    for j in blocks * LANES..out.len() {
        out[j] = dot(c, &y[j..j + w]) * scale;
    }
}

/// The filter's output at one index only: for derivatives needed at a few candidate points.
pub fn at(y: &[f64], half: usize, order: usize, deriv: usize, dx: f64, i: usize) -> Result<f64> {
    let n = y.len();
    let w = 2 * half + 1;
    if n < w || i >= n {
        return invalid(format!("index {i} is outside {n} points or the window of {w}"));
    }
    let rows = &window_rows(half, order, deriv)?.rows;
    let scale = 1.0 / dx.powi(deriv as i32);
    let v = if i < half {
        dot(&rows[i], &y[..w])
    } else if i + half >= n {
        dot(&rows[2 * half - (n - 1 - i)], &y[n - w..])
    } else {
        dot(&rows[half], &y[i - half..=i + half])
    };
    Ok(v * scale)
}

/// Applies the filter to evenly spaced data with spacing `dx`; returns the smoothed values
/// (deriv 0) or the derivative in units of y per unit x.
pub fn filter(y: &[f64], half: usize, order: usize, deriv: usize, dx: f64) -> Result<Vec<f64>> {
    let mut out = Vec::new();
    filter_into(y, half, order, deriv, dx, &mut out)?;
    Ok(out)
}

/// [`filter`] into a buffer the caller keeps (an analysis that filters at several widths
/// reuses one); `out` is resized to the length of `y`.
pub fn filter_into(y: &[f64], half: usize, order: usize, deriv: usize, dx: f64, out: &mut Vec<f64>) -> Result<()> {
    let n = y.len();
    let w = 2 * half + 1;
    if n < w {
        return invalid(format!("{n} points are fewer than the smoothing window of {w}"));
    }
    let window = window_rows(half, order, deriv)?;
    let scale = 1.0 / dx.powi(deriv as i32);
    out.resize(n, 0.0);
    interior(&window.rows[half], y, scale, &mut out[half..n - half]);
    // Near the ends the window is fitted off-centre: row i for output i, row 2·half - i for
    // output n - 1 - i.
    ends(&window.left, &y[..w], scale, &mut out[..half]);
    ends(&window.right, &y[n - w..], scale, &mut out[n - half..]);
    Ok(())
}

/// √(Σ cᵢ²) of the centred weights: how much the filter scales white noise of unit variance
/// (per unit of point spacing, before the 1/dx^deriv of [`filter`]).
pub fn noise_gain(half: usize, order: usize, deriv: usize) -> Result<f64> {
    Ok(window_rows(half, order, deriv)?.rows[half]
        .iter()
        .map(|c| c * c)
        .sum::<f64>()
        .sqrt())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn assert_table(half: usize, order: usize, deriv: usize, ints: &[f64], norm: f64) {
        let c = coefficients(half, order, deriv).unwrap();
        for (got, want) in c.iter().zip(ints) {
            assert!((got - want / norm).abs() < 1e-12, "{half} {order} {deriv}: {c:?}");
        }
    }

    // Savitzky & Golay 1964, Table I (smoothing, quadratic/cubic), as corrected by
    // Steinier, Termonia & Deltour 1972.
    #[test]
    fn smoothing_quadratic_matches_the_tables() {
        assert_table(2, 2, 0, &[-3.0, 12.0, 17.0, 12.0, -3.0], 35.0);
        assert_table(3, 2, 0, &[-2.0, 3.0, 6.0, 7.0, 6.0, 3.0, -2.0], 21.0);
        assert_table(
            4,
            3,
            0,
            &[-21.0, 14.0, 39.0, 54.0, 59.0, 54.0, 39.0, 14.0, -21.0],
            231.0,
        );
        assert_table(
            5,
            2,
            0,
            &[-36.0, 9.0, 44.0, 69.0, 84.0, 89.0, 84.0, 69.0, 44.0, 9.0, -36.0],
            429.0,
        );
    }

    // Table II (smoothing, quartic/quintic), 7 and 9 points.
    #[test]
    fn smoothing_quartic_matches_the_tables() {
        assert_table(3, 4, 0, &[5.0, -30.0, 75.0, 131.0, 75.0, -30.0, 5.0], 231.0);
        assert_table(
            4,
            4,
            0,
            &[15.0, -55.0, 30.0, 135.0, 179.0, 135.0, 30.0, -55.0, 15.0],
            429.0,
        );
    }

    // Table III (first derivative, quadratic) and Table VI (second derivative, quadratic/cubic).
    #[test]
    fn derivatives_match_the_tables() {
        assert_table(2, 2, 1, &[-2.0, -1.0, 0.0, 1.0, 2.0], 10.0);
        assert_table(3, 2, 1, &[-3.0, -2.0, -1.0, 0.0, 1.0, 2.0, 3.0], 28.0);
        assert_table(2, 2, 2, &[2.0, -1.0, -2.0, -1.0, 2.0], 7.0);
        assert_table(3, 3, 2, &[5.0, 0.0, -3.0, -4.0, -3.0, 0.0, 5.0], 42.0);
        // Table IV (first derivative, cubic/quartic), 5 points: (1, -8, 0, 8, -1)/12.
        assert_table(2, 3, 1, &[1.0, -8.0, 0.0, 8.0, -1.0], 12.0);
    }

    /// The side-by-side outputs must be the one-at-a-time dot products bit for bit, so that
    /// smoothing gives the same numbers as before it was made faster (known truth: `dot`).
    #[test]
    fn side_by_side_outputs_equal_one_at_a_time() {
        let mut state: u64 = 0x2545_F491_4F6C_DD1D;
        let mut next = || {
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            (state >> 11) as f64 / (1u64 << 53) as f64 - 0.5
        };
        for n in [1usize, 2, 3, 4, 5, 7, 8, 9, 33, 601] {
            let y: Vec<f64> = (0..n + 60).map(|_| next() * 3.0).collect();
            for w in [1usize, 2, 3, 4, 5, 7, 9, 17, 41, 61] {
                let c: Vec<f64> = (0..w).map(|_| next()).collect();
                let want: Vec<u64> = (0..n).map(|j| (dot(&c, &y[j..j + w]) * 0.37).to_bits()).collect();
                let mut out = vec![0.0; n];
                interior(&c, &y[..n + w - 1], 0.37, &mut out);
                assert_eq!(out.iter().map(|v| v.to_bits()).collect::<Vec<_>>(), want, "n {n} w {w}");
                let mut portable = vec![0.0; n];
                interior_lanes(&c, &y[..n + w - 1], 0.37, &mut portable);
                assert_eq!(
                    portable.iter().map(|v| v.to_bits()).collect::<Vec<_>>(),
                    want,
                    "n {n} w {w}"
                );
            }
        }
    }

    /// The whole filter against the one-output-at-a-time form it replaced (full windows by
    /// `dot`, the ends by `Iterator::sum`), bit for bit, for the windows analysis uses.
    #[test]
    fn the_filter_equals_the_one_at_a_time_form() {
        let y: Vec<f64> = (0..601)
            .map(|i| {
                let nm = 400.0 + 0.5 * i as f64;
                0.3 * (-((nm - 550.0) / 20.0).powi(2)).exp() + 1e4 / (nm * nm) + 1e-3 * ((i * 7919) % 13) as f64
            })
            .collect();
        for (half, order, deriv) in [
            (4, 3, 0),
            (8, 3, 2),
            (20, 3, 2),
            (4, 3, 1),
            (2, 2, 0),
            (1, 2, 0),
            (30, 4, 2),
        ] {
            let rows = window_rows(half, order, deriv).unwrap();
            let rows = &rows.rows;
            let n = y.len();
            let w = 2 * half + 1;
            let scale = 1.0 / 0.5f64.powi(deriv as i32);
            let mut want = vec![0.0; n];
            for i in half..n - half {
                want[i] = dot(&rows[half], &y[i - half..=i + half]) * scale;
            }
            for i in 0..half {
                want[i] = rows[i].iter().zip(&y[..w]).map(|(c, v)| c * v).sum::<f64>() * scale;
                want[n - 1 - i] = rows[2 * half - i]
                    .iter()
                    .zip(&y[n - w..])
                    .map(|(c, v)| c * v)
                    .sum::<f64>()
                    * scale;
            }
            let got = filter(&y, half, order, deriv, 0.5).unwrap();
            let bits = |v: &[f64]| v.iter().map(|x| x.to_bits()).collect::<Vec<_>>();
            assert_eq!(bits(&got), bits(&want), "half {half} order {order} deriv {deriv}");
        }
        // A sum of products that are all -0.0 keeps the sign `Iterator::sum` gives it.
        let rows = window_rows(2, 2, 0).unwrap();
        let mut zeros: Vec<f64> = rows.rows[0].iter().map(|c| if *c > 0.0 { -0.0 } else { 0.0 }).collect();
        zeros.resize(20, 0.0);
        let got = filter(&zeros, 2, 2, 0, 1.0).unwrap();
        let want = rows.rows[0].iter().zip(&zeros).map(|(c, v)| c * v).sum::<f64>();
        assert_eq!(got[0].to_bits(), want.to_bits());
    }

    #[test]
    fn a_cubic_passes_through_a_cubic_filter_unchanged() {
        let y: Vec<f64> = (0..30)
            .map(|i| {
                let x = i as f64 * 0.5;
                0.3 * x * x * x - x + 2.0
            })
            .collect();
        let s = filter(&y, 3, 3, 0, 0.5).unwrap();
        for (a, b) in s.iter().zip(&y) {
            assert!((a - b).abs() < 1e-8);
        }
        let d2 = filter(&y, 3, 3, 2, 0.5).unwrap();
        for (i, v) in d2.iter().enumerate() {
            let x = i as f64 * 0.5;
            assert!((v - 1.8 * x).abs() < 1e-6, "at {i}: {v}");
        }
    }
}
