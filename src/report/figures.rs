//! Numbers as both faces print them where a fixed number of decimals would mislead: a rate of
//! 0.00998 nm/min shown to three decimals reads as 0.010, and in an exponent form as nothing
//! else on the sheet does. Promises: plain decimals, never an exponent, for the magnitudes a
//! lab's quantities take.

/// `x` to three significant figures in plain decimals (0.00998, 0.0600, 1.25, 125).
pub fn three_figures(x: f64) -> String {
    if x == 0.0 || !x.is_finite() {
        return format!("{x}");
    }
    let decimals = (2 - x.abs().log10().floor() as i32).max(0) as usize;
    format!("{x:.decimals$}")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn three_figures_in_plain_decimals() {
        assert_eq!(three_figures(0.009_98), "0.00998");
        assert_eq!(three_figures(0.06), "0.0600");
        assert_eq!(three_figures(-0.001_024), "-0.00102");
        assert_eq!(three_figures(1.254), "1.25");
        assert_eq!(three_figures(125.4), "125");
        assert_eq!(three_figures(0.0), "0");
    }
}
