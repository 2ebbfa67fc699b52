//! Display units: lengths in metres or kilometres, times in seconds or hours, chosen once by a
//! front end and used by every view, figure and plot it makes. Only what is shown changes: the
//! data (and every data file) stays in SI units with the unit in the column names.

use serde::{Deserialize, Serialize};

/// How lengths are shown.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum LengthDisplay {
    /// Metres.
    Metres,
    /// Kilometres (scale bars shorter than 1 km still read in metres).
    #[default]
    Kilometres,
}

/// How times are shown.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum TimeDisplay {
    /// Seconds.
    #[default]
    Seconds,
    /// Hours.
    Hours,
}

/// The units lengths and times are shown in.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(default)]
pub struct DisplayUnits {
    /// Lengths.
    pub length: LengthDisplay,
    /// Times.
    pub time: TimeDisplay,
}

impl DisplayUnits {
    /// Metres and seconds, as the data files are written.
    pub const SI: DisplayUnits = DisplayUnits {
        length: LengthDisplay::Metres,
        time: TimeDisplay::Seconds,
    };

    /// Metres per shown length unit.
    pub fn metres_per_length_unit(self) -> f64 {
        match self.length {
            LengthDisplay::Metres => 1.0,
            LengthDisplay::Kilometres => 1000.0,
        }
    }

    /// Seconds per shown time unit.
    pub fn seconds_per_time_unit(self) -> f64 {
        match self.time {
            TimeDisplay::Seconds => 1.0,
            TimeDisplay::Hours => 3600.0,
        }
    }

    /// A length in metres, in the shown unit.
    pub fn length(self, m: f64) -> f64 {
        m / self.metres_per_length_unit()
    }

    /// A time in seconds, in the shown unit.
    pub fn time(self, s: f64) -> f64 {
        s / self.seconds_per_time_unit()
    }

    /// Symbol of the shown length unit.
    pub fn length_symbol(self) -> &'static str {
        match self.length {
            LengthDisplay::Metres => "m",
            LengthDisplay::Kilometres => "km",
        }
    }

    /// Symbol of the shown time unit.
    pub fn time_symbol(self) -> &'static str {
        match self.time {
            TimeDisplay::Seconds => "s",
            TimeDisplay::Hours => "h",
        }
    }

    /// Decimals that resolve 0.1 m in the shown length unit.
    pub fn length_decimals(self) -> usize {
        match self.length {
            LengthDisplay::Metres => 1,
            LengthDisplay::Kilometres => 4,
        }
    }

    /// Decimals that resolve 0.1 s in the shown time unit.
    pub fn time_decimals(self) -> usize {
        match self.time {
            TimeDisplay::Seconds => 1,
            TimeDisplay::Hours => 5,
        }
    }

    /// `"12.3 m"` or `"0.0123 km"` (to 0.1 m); "—" when not finite.
    pub fn fmt_length(self, m: f64) -> String {
        if !m.is_finite() {
            return "—".into();
        }
        format!(
            "{:.*} {}",
            self.length_decimals(),
            self.length(m),
            self.length_symbol()
        )
    }

    /// `"95.0 s"` or `"0.02639 h"` (to 0.1 s); "—" when not finite.
    pub fn fmt_time(self, s: f64) -> String {
        if !s.is_finite() {
            return "—".into();
        }
        format!(
            "{:.*} {}",
            self.time_decimals(),
            self.time(s),
            self.time_symbol()
        )
    }

    /// The time stamp of a view: the time in the shown unit, the other unit and spin turns in
    /// brackets.
    pub fn time_stamp(self, t_s: f64, period_s: f64) -> String {
        let turns = if period_s > 0.0 { t_s / period_s } else { 0.0 };
        match self.time {
            TimeDisplay::Seconds => crate::composite::time_stamp(t_s, period_s),
            TimeDisplay::Hours => format!(
                "t = {:.4} h  ({:.1} s, {turns:.3} turns)",
                t_s / 3600.0,
                t_s
            ),
        }
    }

    /// Unit text a scale bar is labelled with (`""`: metres below 1 km, kilometres above).
    pub fn scale_bar_unit(self) -> &'static str {
        match self.length {
            LengthDisplay::Metres => "m",
            LengthDisplay::Kilometres => "",
        }
    }
}

#[cfg(test)]
#[allow(clippy::unwrap_used, reason = "tests unwrap freely")]
mod tests {
    use super::*;

    #[test]
    fn lengths_and_times_convert_and_format_in_the_chosen_unit() {
        let si = DisplayUnits::SI;
        let kh = DisplayUnits {
            length: LengthDisplay::Kilometres,
            time: TimeDisplay::Hours,
        };
        assert_eq!(si.fmt_length(1234.56), "1234.6 m");
        assert_eq!(kh.fmt_length(1234.56), "1.2346 km");
        assert_eq!(si.fmt_time(5400.0), "5400.0 s");
        assert_eq!(kh.fmt_time(5400.0), "1.50000 h");
        assert_eq!(kh.fmt_length(f64::NAN), "—");
        assert!(kh.time_stamp(7200.0, 3600.0).starts_with("t = 2.0000 h"));
        assert!(si.time_stamp(7200.0, 3600.0).starts_with("t = 7200.0 s"));
        // Persisted settings without the field load with the default.
        let u: DisplayUnits = serde_json::from_str(r#"{"time": "hours"}"#).unwrap();
        assert_eq!(u.time, TimeDisplay::Hours);
        assert_eq!(u.length, LengthDisplay::default());
    }
}
