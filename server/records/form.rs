//! Reading an HTML form: every value arrives as text in the shop's display units. A value that
//! does not parse is recorded as a field error and the user's text is kept for the re-rendered
//! form, so nothing typed is lost.

use crate::clutch::units::Units;

use super::FieldErrors;

/// Decimals a length is shown and prefilled with: 0.001 in, or 0.01 mm.
pub fn length_decimals(units: Units) -> usize {
    match units {
        Units::Imperial => 3,
        Units::Metric => 2,
    }
}

/// The submitted name/value pairs of one form, as typed.
#[derive(Debug, Clone, Default)]
pub struct FormData {
    pairs: Vec<(String, String)>,
}

impl FormData {
    pub fn new(pairs: Vec<(String, String)>) -> Self {
        Self { pairs }
    }

    /// The first value for `name`, trimmed; empty when absent.
    pub fn get(&self, name: &str) -> &str {
        self.pairs
            .iter()
            .find(|(k, _)| k == name)
            .map(|(_, v)| v.trim())
            .unwrap_or("")
    }

    /// Sets (or replaces) a value, for prefilling a form.
    pub fn set(&mut self, name: &str, value: impl Into<String>) {
        let value = value.into();
        match self.pairs.iter_mut().find(|(k, _)| k == name) {
            Some(pair) => pair.1 = value,
            None => self.pairs.push((name.to_string(), value)),
        }
    }

    /// Sets a number with a fixed number of decimals; `None` leaves the field empty.
    pub fn set_num(&mut self, name: &str, value: Option<f64>, decimals: usize) {
        let text = value
            .map(|v| trim_zeros(format!("{v:.decimals$}")))
            .unwrap_or_default();
        self.set(name, text);
    }

    pub fn is_checked(&self, name: &str) -> bool {
        matches!(self.get(name), "on" | "true" | "1" | "yes")
    }
}

fn trim_zeros(s: String) -> String {
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

/// The key a form uses for a stored field: the storage-unit suffix is dropped, because the form
/// shows the value in the shop's units (`facing_od_mm` is the form's `facing_od`).
pub fn form_key(field: &str) -> &str {
    const SUFFIXES: [&str; 7] = ["_n_per_mm", "_n_per_g", "_nm", "_mm", "_kg", "_n", "_s"];
    SUFFIXES
        .iter()
        .find_map(|s| field.strip_suffix(s))
        .unwrap_or(field)
}

/// Reads typed values out of a form, converting display units to storage units.
pub struct FormReader<'a> {
    form: &'a FormData,
    pub units: Units,
    pub errors: FieldErrors,
}

impl<'a> FormReader<'a> {
    pub fn new(form: &'a FormData, units: Units) -> Self {
        Self {
            form,
            units,
            errors: FieldErrors::default(),
        }
    }

    pub fn text(&self, name: &str) -> String {
        self.form.get(name).to_string()
    }

    pub fn checked(&self, name: &str) -> bool {
        self.form.is_checked(name)
    }

    /// An optional number: empty gives `None`; text that is not a number is an error.
    pub fn opt_number(&mut self, name: &str) -> Option<f64> {
        let raw = self.form.get(name);
        if raw.is_empty() {
            return None;
        }
        match parse_number(raw) {
            Some(v) => Some(v),
            None => {
                self.errors.add(name, "enter a number");
                None
            }
        }
    }

    /// A required number: empty is an error too. Returns NaN on error so range checks that
    /// follow cannot pass by accident (their message is suppressed: first message wins).
    pub fn number(&mut self, name: &str) -> f64 {
        if self.form.get(name).is_empty() {
            self.errors.add(name, "required");
            return f64::NAN;
        }
        self.opt_number(name).unwrap_or(f64::NAN)
    }

    /// An optional whole number: empty gives `default`; a fraction is an error, not cut off.
    pub fn opt_integer(&mut self, name: &str, default: i64) -> i64 {
        if self.form.get(name).is_empty() {
            return default;
        }
        self.integer(name)
    }

    /// A required whole number.
    pub fn integer(&mut self, name: &str) -> i64 {
        let v = self.number(name);
        if v.is_finite() && v.fract() != 0.0 {
            self.errors.add(name, "enter a whole number");
        }
        if v.is_finite() && v.abs() < 1e15 {
            v as i64
        } else {
            i64::MIN
        }
    }

    pub fn opt_length(&mut self, name: &str) -> Option<f64> {
        let units = self.units;
        self.opt_number(name).map(|v| units.length_to_mm(v))
    }

    pub fn length(&mut self, name: &str) -> f64 {
        let units = self.units;
        units.length_to_mm(self.number(name))
    }

    pub fn force(&mut self, name: &str) -> f64 {
        let units = self.units;
        units.force_to_n(self.number(name))
    }

    pub fn opt_rate(&mut self, name: &str) -> Option<f64> {
        let units = self.units;
        self.opt_number(name).map(|v| units.rate_to_n_per_mm(v))
    }

    pub fn opt_torque(&mut self, name: &str) -> Option<f64> {
        let units = self.units;
        self.opt_number(name).map(|v| units.torque_to_nm(v))
    }

    /// A list of lengths separated by commas, spaces or semicolons ("0.010, 0.010, 0.020").
    pub fn length_list(&mut self, name: &str) -> Vec<f64> {
        let units = self.units;
        self.number_list(name)
            .into_iter()
            .map(|v| units.length_to_mm(v))
            .collect()
    }

    /// A list of plain numbers separated by commas, spaces or semicolons.
    pub fn number_list(&mut self, name: &str) -> Vec<f64> {
        let mut out = Vec::new();
        for item in self
            .form
            .get(name)
            .split([',', ';', ' ', '\n', '\t'])
            .filter(|s| !s.trim().is_empty())
        {
            match parse_number(item.trim()) {
                Some(v) => out.push(v),
                None => {
                    self.errors.add(
                        name,
                        format!("{item:?} is not a number; separate values with commas"),
                    );
                    return Vec::new();
                }
            }
        }
        out
    }

    /// `rpm,torque` lines (CSV pasted from a dyno sheet; a header line is skipped) in display
    /// torque units, converted to N*m.
    pub fn torque_table(&mut self, name: &str) -> Vec<[f64; 2]> {
        let mut out = Vec::new();
        for (i, line) in self.form.get(name).lines().enumerate() {
            let line = line.trim();
            if line.is_empty() {
                continue;
            }
            let cells: Vec<&str> = line
                .split([',', ';', '\t', ' '])
                .filter(|c| !c.trim().is_empty())
                .collect();
            let parsed = match cells.as_slice() {
                [rpm, torque] => parse_number(rpm).zip(parse_number(torque)),
                _ => None,
            };
            match parsed {
                Some((rpm, torque)) => out.push([rpm, self.units.torque_to_nm(torque)]),
                None if i == 0 && out.is_empty() && line.chars().any(char::is_alphabetic) => {}
                None => {
                    self.errors.add(
                        name,
                        format!("line {}: expected \"rpm, torque\", got {line:?}", i + 1),
                    );
                    return Vec::new();
                }
            }
        }
        out
    }
}

/// A decimal number as people type it ("1.905", "0,5" is not accepted: commas separate lists).
/// Rejects NaN and infinities spelled out.
fn parse_number(raw: &str) -> Option<f64> {
    let raw = raw.trim();
    let ok_chars = raw
        .chars()
        .all(|c| c.is_ascii_digit() || matches!(c, '.' | '-' | '+' | 'e' | 'E'));
    if !ok_chars || raw.is_empty() {
        return None;
    }
    raw.parse::<f64>().ok().filter(|v| v.is_finite())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn form(pairs: &[(&str, &str)]) -> FormData {
        FormData::new(
            pairs
                .iter()
                .map(|(k, v)| (k.to_string(), v.to_string()))
                .collect(),
        )
    }

    #[test]
    fn lengths_typed_in_inches_are_stored_in_millimetres() {
        let data = form(&[("od", "10.4")]);
        let mut r = FormReader::new(&data, Units::Imperial);
        assert!((r.length("od") - 264.16).abs() < 1e-9);
        assert!(r.errors.is_empty());
    }

    #[test]
    fn text_that_is_not_a_number_is_named_and_nan_is_refused() {
        let data = form(&[("a", "abc"), ("b", "NaN"), ("c", "inf"), ("d", "")]);
        let mut r = FormReader::new(&data, Units::Metric);
        r.number("a");
        r.number("b");
        r.number("c");
        r.number("d");
        assert_eq!(r.errors.get("a"), Some("enter a number"));
        assert_eq!(r.errors.get("b"), Some("enter a number"));
        assert_eq!(r.errors.get("c"), Some("enter a number"));
        assert_eq!(r.errors.get("d"), Some("required"));
    }

    #[test]
    fn a_pasted_torque_table_skips_its_header_and_converts_units() {
        let data = form(&[("curve", "rpm,torque\n3000, 100\n4000,200\n")]);
        let mut r = FormReader::new(&data, Units::Imperial);
        let t = r.torque_table("curve");
        assert_eq!(t.len(), 2);
        assert_eq!(t[0][0], 3000.0);
        // 1 lbf*ft = 1.3558179483314004 N*m (exact from the 1959 yard and pound definitions)
        assert!((t[0][1] - 135.58179483314004).abs() < 1e-9);
    }

    #[test]
    fn form_keys_drop_the_storage_unit() {
        assert_eq!(form_key("facing_od_mm"), "facing_od");
        assert_eq!(form_key("spring_rate_n_per_mm"), "spring_rate");
        assert_eq!(form_key("counterweight_g"), "counterweight_g");
        assert_eq!(form_key("name"), "name");
    }
}
