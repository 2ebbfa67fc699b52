//! Numeric fields that never drop a keystroke: the typed text is kept as typed while the field
//! has the focus, and committed only on Enter or when the focus leaves (Tab, a click elsewhere).
//! Text that is not a number, or a number out of range, is refused visibly: the field keeps the
//! text with a red frame and says why next to it, and the value stays what it was. Escape puts
//! the value back into the field.
//!
//! Values are kept in the unit the document stores them in; `scale` shows them in another
//! (shown = stored / scale), so a typed value in the stored unit is kept exactly. A field left
//! with the text it showed changes nothing (a value shown rounded keeps its digits).

use egui::text::{CCursor, CCursorRange};
use egui::{Color32, IdSalt, Key, Response, RichText, Stroke, Ui};

/// Red of refused text and its message.
pub const ERROR_RED: Color32 = Color32::from_rgb(255, 110, 100);

/// A number a field can edit.
pub trait FieldNumber: Copy + PartialEq {
    /// The stored value of the shown `text` (shown = stored / `scale`), or why it is not one.
    fn parse_shown(text: &str, scale: f64) -> Result<Self, String>;
    /// The text shown for the value.
    fn shown_text(self, scale: f64) -> String;
    /// The value as a float (for range checks).
    fn as_f64(self) -> f64;
}

/// Up to 12 significant digits, trailing zeros dropped (1e-9 stays "1e-9").
pub fn fmt_editable(v: f64) -> String {
    if v == 0.0 || !v.is_finite() {
        return format!("{v}");
    }
    let a = v.abs();
    if !(1e-4..1e12).contains(&a) {
        let s = format!("{v:.11e}");
        let (mantissa, exp) = s.split_once('e').unwrap_or((&s, "0"));
        let mantissa = mantissa.trim_end_matches('0').trim_end_matches('.');
        return format!("{mantissa}e{exp}");
    }
    let decimals = (11 - a.log10().floor() as i32).clamp(0, 15) as usize;
    let s = format!("{v:.decimals$}");
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

fn quoted(text: &str) -> String {
    let t: String = text.trim().chars().take(24).collect();
    format!("“{t}”")
}

impl FieldNumber for f64 {
    fn parse_shown(text: &str, scale: f64) -> Result<Self, String> {
        let t = text.trim();
        if t.is_empty() {
            return Err("type a number".into());
        }
        match t.parse::<f64>() {
            Ok(v) if v.is_finite() => {
                if scale == 1.0 {
                    Ok(v)
                } else {
                    Ok(v * scale)
                }
            }
            _ => Err(format!("{} is not a number", quoted(t))),
        }
    }

    fn shown_text(self, scale: f64) -> String {
        fmt_editable(if scale == 1.0 { self } else { self / scale })
    }

    fn as_f64(self) -> f64 {
        self
    }
}

macro_rules! integer_field {
    ($t:ty) => {
        impl FieldNumber for $t {
            fn parse_shown(text: &str, _scale: f64) -> Result<Self, String> {
                let t = text.trim();
                if t.is_empty() {
                    return Err("type a whole number".into());
                }
                t.parse::<$t>()
                    .map_err(|_| format!("{} is not a whole number of 0 or more", quoted(t)))
            }

            fn shown_text(self, _scale: f64) -> String {
                self.to_string()
            }

            fn as_f64(self) -> f64 {
                self as f64
            }
        }
    };
}

integer_field!(u64);
integer_field!(u32);
integer_field!(usize);

/// What the field holds between frames while it differs from the value.
#[derive(Debug, Clone, Default)]
struct Draft {
    text: String,
    error: Option<String>,
}

/// A numeric text field (see the module documentation).
pub struct NumberField<'a, T: FieldNumber> {
    value: &'a mut T,
    id_salt: IdSalt,
    min: f64,
    max: f64,
    scale: f64,
    unit: String,
    width: f32,
    enabled: bool,
    decimals: Option<usize>,
}

impl<'a, T: FieldNumber> NumberField<'a, T> {
    /// A field editing `value`; `id_salt` tells fields of one panel apart.
    pub fn new(value: &'a mut T, id_salt: impl egui::AsIdSalt) -> Self {
        Self {
            value,
            id_salt: IdSalt::new(id_salt),
            min: f64::NEG_INFINITY,
            max: f64::INFINITY,
            scale: 1.0,
            unit: String::new(),
            width: 90.0,
            enabled: true,
            decimals: None,
        }
    }

    /// Show at most `decimals` decimals (the value keeps its digits unless the text is edited).
    pub fn decimals(mut self, decimals: usize) -> Self {
        self.decimals = Some(decimals);
        self
    }

    /// The text shown for the value.
    fn shown(&self) -> String {
        let text = self.value.shown_text(self.scale);
        match (self.decimals, text.parse::<f64>()) {
            (Some(d), Ok(v)) if !text.contains('e') => {
                let t = format!("{v:.d$}");
                if t.contains('.') {
                    t.trim_end_matches('0').trim_end_matches('.').to_string()
                } else {
                    t
                }
            }
            _ => text,
        }
    }

    /// Allowed stored values, both ends included.
    pub fn range(mut self, min: f64, max: f64) -> Self {
        self.min = min;
        self.max = max;
        self
    }

    /// Shown unit after the field (shown = stored / `scale`).
    pub fn unit(mut self, unit: impl Into<String>, scale: f64) -> Self {
        self.unit = unit.into();
        self.scale = scale;
        self
    }

    /// Width of the text, points.
    pub fn width(mut self, width: f32) -> Self {
        self.width = width;
        self
    }

    /// Whether the field can be edited.
    pub fn enabled(mut self, enabled: bool) -> Self {
        self.enabled = enabled;
        self
    }

    fn check(&self, text: &str) -> Result<T, String> {
        let v = T::parse_shown(text, self.scale)?;
        let x = v.as_f64();
        // A little slack so a bound typed in another unit is not refused by rounding.
        let slack = 1e-12 * self.min.abs().max(self.max.abs()).min(1e300);
        if x < self.min - slack || x > self.max + slack {
            let shown = |b: f64| fmt_editable(b / self.scale);
            let unit = if self.unit.is_empty() {
                String::new()
            } else {
                format!(" {}", self.unit)
            };
            return Err(format!(
                "{} is out of range: {} to {}{unit}",
                quoted(text),
                shown(self.min),
                shown(self.max)
            ));
        }
        Ok(v)
    }

    /// Draws the field; the response is the text field's (`changed()` when a new value was
    /// committed).
    pub fn show(self, ui: &mut Ui) -> Response {
        let id = ui.make_persistent_id(self.id_salt);
        let edit_id = id.with("text");
        let draft: Option<Draft> = ui.data(|d| d.get_temp(id));
        let shown = self.shown();
        let mut text = draft
            .as_ref()
            .map_or_else(|| shown.clone(), |d| d.text.clone());
        let error = draft.as_ref().and_then(|d| d.error.clone());
        let inner = ui.horizontal(|ui| {
            let mut edit = egui::TextEdit::singleline(&mut text)
                .id(edit_id)
                .desired_width(self.width)
                .interactive(self.enabled);
            if error.is_some() {
                edit = edit.text_color(ERROR_RED);
            }
            let mut output = edit.show(ui);
            if output.response.gained_focus() {
                // Typing replaces the whole value.
                let all = CCursorRange::two(CCursor::new(0), CCursor::new(text.chars().count()));
                output.state.cursor.set_char_range(Some(all));
                output.state.clone().store(ui.ctx(), edit_id);
            }
            let response = output.response.response;
            if error.is_some() {
                ui.painter().rect_stroke(
                    response.rect.expand(1.0),
                    2.0,
                    Stroke::new(1.5, ERROR_RED),
                    egui::StrokeKind::Outside,
                );
            }
            if !self.unit.is_empty() {
                ui.label(&self.unit);
            }
            if let Some(e) = &error {
                ui.label(RichText::new(e).color(ERROR_RED).small());
            }
            response
        });
        let mut response = inner.inner;
        // The caller sees a change only when a new value is committed.
        response.flags.remove(egui::response::Flags::CHANGED);
        let escape = ui.input(|i| i.key_pressed(Key::Escape));
        if response.lost_focus() {
            if escape || text.trim() == shown {
                // Put back, or left as shown: the value keeps all its digits.
                ui.data_mut(|d| d.remove::<Draft>(id));
            } else {
                match self.check(&text) {
                    Ok(v) => {
                        ui.data_mut(|d| d.remove::<Draft>(id));
                        if v != *self.value {
                            *self.value = v;
                            response.mark_changed();
                        }
                    }
                    Err(e) => {
                        ui.data_mut(|d| {
                            d.insert_temp(
                                id,
                                Draft {
                                    text,
                                    error: Some(e),
                                },
                            )
                        });
                    }
                }
            }
        } else if response.has_focus() {
            // Keep the text as typed (and any refusal) until it is committed.
            ui.data_mut(|d| d.insert_temp(id, Draft { text, error }));
        }
        response
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn editable_numbers_are_short_and_exact() {
        assert_eq!(fmt_editable(1500.0), "1500");
        assert_eq!(fmt_editable(0.05), "0.05");
        assert_eq!(fmt_editable(1e-9), "1e-9");
        assert_eq!(fmt_editable(4.297), "4.297");
        assert_eq!(fmt_editable(-12.5), "-12.5");
        assert_eq!(fmt_editable(6.5e13), "6.5e13");
        assert_eq!(fmt_editable(0.0), "0");
        // Round trip through the text.
        for v in [1.0 / 3.0, 123_456.789, 2.5e-7, 9.81] {
            let back: f64 = fmt_editable(v).parse().unwrap_or(f64::NAN);
            assert!((back / v - 1.0).abs() < 1e-11, "{v} -> {}", fmt_editable(v));
        }
    }

    #[test]
    fn parsing_refuses_what_is_not_a_number_and_scales_what_is() {
        assert_eq!(f64::parse_shown(" 2.5 ", 1000.0), Ok(2500.0));
        assert!(f64::parse_shown("12a", 1.0).is_err());
        assert!(f64::parse_shown("nan", 1.0).is_err());
        assert!(f64::parse_shown("", 1.0).is_err());
        assert_eq!(u64::parse_shown("42", 1.0), Ok(42));
        assert!(u64::parse_shown("4.5", 1.0).is_err());
        assert!(u32::parse_shown("-1", 1.0).is_err());
    }
}
