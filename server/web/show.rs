//! Numbers as the shop reads them: converted to its units, rounded the shop's way, unit attached.
//! Heights to 0.001 in or 0.01 mm; forces, torque and speed whole; counterweights to 0.1 g.

use crate::clutch::units::Units;
use crate::records::length_decimals;

/// A number a template hands over, by value or by reference (askama passes arguments by
/// reference, and loop variables add another level).
pub trait Num: Copy {
    fn value(self) -> f64;
}

impl Num for f64 {
    fn value(self) -> f64 {
        self
    }
}

impl Num for i64 {
    fn value(self) -> f64 {
        self as f64
    }
}

impl<T: Num> Num for &T {
    fn value(self) -> f64 {
        (*self).value()
    }
}

/// Formats stored values (mm, N, N/mm, N*m, kg) in the shop's display units.
#[derive(Debug, Clone, Copy)]
pub struct Show {
    pub units: Units,
}

const DASH: &str = "–";

impl Show {
    pub fn new(units: Units) -> Self {
        Self { units }
    }

    /// Decimals for lengths in these units.
    pub fn length_decimals(&self) -> usize {
        length_decimals(self.units)
    }

    pub fn length_unit(&self) -> &'static str {
        self.units.length_label()
    }
    pub fn force_unit(&self) -> &'static str {
        self.units.force_label()
    }
    pub fn rate_unit(&self) -> &'static str {
        self.units.rate_label()
    }
    pub fn torque_unit(&self) -> &'static str {
        self.units.torque_label()
    }
    pub fn weight_unit(&self) -> &'static str {
        self.units.weight_label()
    }

    /// A length with its unit ("1.905 in").
    pub fn len(&self, mm: impl Num) -> String {
        let mm = mm.value();
        format!("{} {}", self.len_num(mm), self.length_unit())
    }

    /// A length without its unit, for table cells under a titled column.
    pub fn len_num(&self, mm: impl Num) -> String {
        let mm = mm.value();
        format!("{:.*}", self.length_decimals(), self.units.mm_to_length(mm))
    }

    pub fn opt_len(&self, mm: &Option<f64>) -> String {
        mm.map_or_else(|| DASH.into(), |v| self.len(v))
    }

    pub fn force_num(&self, n: impl Num) -> String {
        let n = n.value();
        format!("{:.0}", self.units.n_to_force(n))
    }

    pub fn rate(&self, n_per_mm: impl Num) -> String {
        let n_per_mm = n_per_mm.value();
        format!(
            "{:.1} {}",
            self.units.n_per_mm_to_rate(n_per_mm),
            self.rate_unit()
        )
    }

    pub fn rate_num(&self, n_per_mm: impl Num) -> String {
        format!("{:.1}", self.units.n_per_mm_to_rate(n_per_mm.value()))
    }

    pub fn opt_rate(&self, n_per_mm: &Option<f64>) -> String {
        n_per_mm.map_or_else(|| DASH.into(), |v| self.rate(v))
    }

    pub fn torque(&self, nm: impl Num) -> String {
        let nm = nm.value();
        format!("{:.0} {}", self.units.nm_to_torque(nm), self.torque_unit())
    }

    pub fn opt_torque(&self, nm: &Option<f64>) -> String {
        nm.map_or_else(|| DASH.into(), |v| self.torque(v))
    }

    pub fn opt_weight(&self, kg: &Option<f64>) -> String {
        kg.map_or_else(
            || DASH.into(),
            |v| format!("{:.0} {}", self.units.kg_to_weight(v), self.weight_unit()),
        )
    }

    /// Grams to 0.1 g.
    pub fn grams(&self, g: impl Num) -> String {
        let g = g.value();
        format!("{g:.1} g")
    }

    pub fn rpm(&self, rpm: impl Num) -> String {
        let rpm = rpm.value();
        format!("{rpm:.0} rpm")
    }

    pub fn opt_rpm(&self, rpm: &Option<f64>) -> String {
        rpm.map_or_else(|| DASH.into(), |v| self.rpm(v))
    }

    pub fn opt_ratio(&self, ratio: &Option<f64>) -> String {
        ratio.map_or_else(|| DASH.into(), |v| format!("{v:.2}"))
    }

    pub fn opt_seconds(&self, s: &Option<f64>) -> String {
        s.map_or_else(|| DASH.into(), |v| format!("{v:.3} s"))
    }

    pub fn pct(&self, pct: impl Num) -> String {
        let pct = pct.value();
        format!("{pct:.1} %")
    }
}

/// A build's adjuster thread in words.
pub fn thread_text(b: &crate::records::build::BuildInput) -> String {
    match (b.adjuster_tpi, b.adjuster_pitch_mm) {
        (Some(tpi), _) => format!("{tpi} threads per inch"),
        (_, Some(p)) => format!("{p} mm pitch"),
        _ => "not recorded".into(),
    }
}

/// A build's facing material in words.
pub fn material_text(b: &crate::records::build::BuildInput) -> String {
    crate::clutch::friction::FacingMaterial::from_key(&b.facing_material)
        .map_or_else(|| b.facing_material.clone(), |m| m.label().to_string())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn heights_show_to_the_thousandth_inch_or_hundredth_mm() {
        assert_eq!(Show::new(Units::Imperial).len(48.387), "1.905 in");
        assert_eq!(Show::new(Units::Metric).len(48.387), "48.39 mm");
        // 1000 lbf = 4448.2216152605 N exactly (NIST SP 811, App. B.8)
        assert_eq!(
            Show::new(Units::Imperial).force_num(4448.2216152605),
            "1000"
        );
    }
}
