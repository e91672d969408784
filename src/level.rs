//! The confidence level of an interval: checked once, then carried as a type.

use crate::error::{Error, Result};
use crate::setting::Setting;
use crate::setting::msg;
use serde::Serialize;

/// A confidence level strictly between 0 and 1 (0.95 for a 95% interval).
#[derive(Debug, Clone, Copy, PartialEq, PartialOrd, Serialize)]
#[serde(transparent)]
pub struct Level(f64);

impl Level {
    /// The usual 95%.
    pub const NINETY_FIVE: Level = Level(0.95);

    /// A level, refused unless it lies strictly between 0 and 1 (a value such as 95 gets
    /// the hint to write 0.95).
    pub fn new(level: f64) -> Result<Level> {
        if level > 0.0 && level < 1.0 {
            return Ok(Level(level));
        }
        // A value that reads as a percentage (50 to under 100) gets the hint to write it
        // as a proportion; 1.5 or 2 are no level at all.
        let hint = if (50.0..100.0).contains(&level) {
            format!(
                " (for {}% write {})",
                crate::format::trimmed(level, 6),
                crate::format::trimmed(level / 100.0, 6)
            )
        } else {
            String::new()
        };
        Err(Error::InvalidSetting {
            setting: Setting::Level,
            message: msg![
                Setting::Level,
                format!(" must lie strictly between 0 and 1{hint} (got {level})")
            ],
        })
    }

    /// The level as a number, e.g. 0.95.
    pub fn value(self) -> f64 {
        self.0
    }

    /// The probability in each tail of a two-sided interval, (1 − level)/2.
    pub fn tail(self) -> f64 {
        (1.0 - self.0) / 2.0
    }

    /// The probability below the upper end of a two-sided interval, 1 − (1 − level)/2.
    pub fn upper(self) -> f64 {
        1.0 - self.tail()
    }

    /// The level in percent for reports: "95%", "99.9%".
    pub fn percent(self) -> String {
        let pct = format!("{:.4}", self.0 * 100.0);
        let trimmed = pct.trim_end_matches('0').trim_end_matches('.');
        format!("{trimmed}%")
    }
}

impl Default for Level {
    fn default() -> Self {
        Level::NINETY_FIVE
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn levels_are_checked_once() {
        assert_eq!(Level::new(0.95).unwrap().percent(), "95%");
        assert_eq!(Level::new(0.999).unwrap().percent(), "99.9%");
        assert!((Level::new(0.9).unwrap().tail() - 0.05).abs() < 1e-15);
        let e = Level::new(95.0).unwrap_err();
        assert!(e.to_string().contains("write 0.95"), "{e}");
        let e = Level::new(1.5).unwrap_err().to_string();
        assert!(!e.contains("write"), "{e}");
        for bad in [0.0, 1.0, -0.5, f64::NAN, f64::INFINITY] {
            assert!(Level::new(bad).is_err(), "{bad}");
        }
    }
}
