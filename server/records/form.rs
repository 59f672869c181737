//! An HTML form as it was typed: every value arrives as text (numbers in the shop's display
//! units). The text is kept for a re-rendered form, so nothing typed is lost.

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

    /// Every pair, in the order sent (for inputs whose names carry a key, `dup_7`).
    pub fn pairs(&self) -> &[(String, String)] {
        &self.pairs
    }

    pub fn is_checked(&self, name: &str) -> bool {
        matches!(self.get(name), "on" | "true" | "1" | "yes")
    }
}
