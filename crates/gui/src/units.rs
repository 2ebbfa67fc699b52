//! Number formatting on screen: figures with units in scientific notation when large or
//! small. Lengths and times go through the display units ([`spinfall_scene::DisplayUnits`]).

/// Format a number with a unit, in scientific notation outside 1e-3..1e6.
pub fn fmt_sci(v: f64, unit: &str) -> String {
    if !v.is_finite() {
        return format!("— {unit}");
    }
    let a = v.abs();
    if a != 0.0 && !(1e-3..1e6).contains(&a) {
        format!("{v:.4e} {unit}")
    } else {
        format!("{v:.4} {unit}")
    }
}

pub use spinfall_scene::{field_label, pretty_unit};

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn large_and_small_figures_use_exponents() {
        assert_eq!(fmt_sci(6.5e13, "kg"), "6.5000e13 kg");
        assert_eq!(fmt_sci(12.5, "m/s"), "12.5000 m/s");
        assert_eq!(fmt_sci(f64::NAN, "m"), "— m");
    }
}
