//! Round tick values (1, 2 or 5 times a power of ten) and their labels.

/// Tick values inside a range and the step between them.
#[derive(Clone, Debug, PartialEq)]
pub struct Ticks {
    /// Values in increasing order, all within the range.
    pub values: Vec<f64>,
    /// Step between consecutive values.
    pub step: f64,
}

impl Ticks {
    /// The labels of the values, all with the same number of decimals (enough for the step).
    pub fn labels(&self) -> Vec<String> {
        let largest = self.values.iter().fold(0.0f64, |m, v| m.max(v.abs()));
        self.values
            .iter()
            .map(|&v| format_tick(v, self.step, largest))
            .collect()
    }
}

/// The round step (1, 2 or 5 times a power of ten) nearest above `raw`.
fn round_step(raw: f64) -> f64 {
    let p = 10f64.powf(raw.log10().floor());
    let m = raw / p;
    let k = if m <= 1.0 {
        1.0
    } else if m <= 2.0 {
        2.0
    } else if m <= 5.0 {
        5.0
    } else {
        10.0
    };
    k * p
}

/// Round ticks in `min..=max`, at most `max_count` (at least 2) of them. An empty, reversed or
/// non-finite range gives its finite end points (or nothing).
pub fn nice_ticks(min: f64, max: f64, max_count: usize) -> Ticks {
    let max_count = max_count.clamp(2, 50);
    if !(min.is_finite() && max.is_finite()) || max <= min {
        let values = [min, max]
            .into_iter()
            .filter(|v| v.is_finite())
            .take(if max == min { 1 } else { 2 })
            .collect();
        return Ticks { values, step: 0.0 };
    }
    let span = max - min;
    let mut step = round_step(span / (max_count - 1) as f64);
    loop {
        let first = (min / step).ceil();
        let last = (max / step).floor();
        let n = (last - first) as i64 + 1;
        if n as usize <= max_count || !step.is_finite() {
            let values = (0..n.max(0))
                .map(|i| {
                    let v = (first + i as f64) * step;
                    // Snap -0 and round-off (0.30000000000000004) to the step's grid.
                    if v.abs() < step * 1e-9 { 0.0 } else { v }
                })
                .filter(|v| *v >= min - step * 1e-9 && *v <= max + step * 1e-9)
                .collect();
            return Ticks { values, step };
        }
        step = round_step(step * 1.5);
    }
}

/// A tick label: fixed decimals just fine enough for `step`; scientific notation for very large
/// or small magnitudes (`largest` is the largest magnitude on the axis).
pub fn format_tick(v: f64, step: f64, largest: f64) -> String {
    if !v.is_finite() {
        return format!("{v}");
    }
    if v == 0.0 {
        return "0".into();
    }
    let step = if step > 0.0 && step.is_finite() {
        step
    } else {
        v.abs()
    };
    if !(1e-3..1e6).contains(&largest) {
        // Mantissa digits enough to tell consecutive ticks apart.
        let digits = ((largest.log10().floor() - step.log10().floor()).max(0.0) as usize).min(6);
        let s = format!("{v:.digits$e}");
        return s.replace("e-", "e−").replace('-', "−");
    }
    let decimals = (-step.log10().floor()).clamp(0.0, 8.0) as usize;
    // A step like 0.25 needs two decimals.
    let decimals = if ((step * 10f64.powi(decimals as i32)).round()
        - step * 10f64.powi(decimals as i32))
    .abs()
        > 1e-6
    {
        decimals + 1
    } else {
        decimals
    };
    format!("{v:.decimals$}").replace('-', "−")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ticks_are_round_and_inside_the_range() {
        let t = nice_ticks(0.0364, 35.6, 5);
        assert_eq!(t.values, vec![10.0, 20.0, 30.0]);
        assert_eq!(t.labels(), vec!["10", "20", "30"]);
        let t = nice_ticks(-0.0189, 0.0189, 5);
        assert_eq!(t.step, 0.01);
        assert_eq!(t.labels(), vec!["−0.01", "0", "0.01"]);
        let t = nice_ticks(0.0, 9000.0, 6);
        assert_eq!(t.labels(), vec!["0", "2000", "4000", "6000", "8000"]);
        let t = nice_ticks(5.38, 5.62, 4);
        assert_eq!(t.labels(), vec!["5.4", "5.5", "5.6"]);
    }

    #[test]
    fn small_and_huge_values_use_exponents() {
        let t = nice_ticks(-2e-9, 3e-9, 6);
        assert!(
            t.labels().iter().any(|l| l.contains('e')),
            "{:?}",
            t.labels()
        );
        assert_eq!(format_tick(2_500_000.0, 500_000.0, 2_500_000.0), "2.5e6");
        assert_eq!(format_tick(100_000.0, 20_000.0, 100_000.0), "100000");
    }

    #[test]
    fn degenerate_ranges_do_not_loop() {
        assert_eq!(nice_ticks(1.0, 1.0, 5).values, vec![1.0]);
        assert!(nice_ticks(f64::NAN, 1.0, 5).values.len() <= 1);
        assert!(nice_ticks(0.0, 1e300, 5).values.len() <= 5);
        assert!(nice_ticks(-1e308, 1e308, 5).values.len() <= 5);
    }
}
