//! Numbers as the shop reads them: converted to its units, rounded the shop's way, unit attached.
//! Heights to 0.001 in or 0.01 mm; forces, torque and speed whole; counterweights to 0.1 g.

use crate::clutch::quantity::Kind;
use crate::clutch::units::Units;

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
    pub fn inertia_unit(&self) -> &'static str {
        Kind::Inertia.symbol(self.units)
    }
    pub fn area_unit(&self) -> &'static str {
        Kind::Area.symbol(self.units)
    }

    /// A length with its unit ("1.905 in").
    pub fn len(&self, mm: impl Num) -> String {
        Kind::Length.show(self.units, mm.value())
    }

    /// A length without its unit, for table cells under a titled column.
    pub fn len_num(&self, mm: impl Num) -> String {
        Kind::Length.number(self.units, mm.value())
    }

    pub fn opt_len(&self, mm: &Option<f64>) -> String {
        mm.map_or_else(|| DASH.into(), |v| self.len(v))
    }

    pub fn force_num(&self, n: impl Num) -> String {
        Kind::Force.number(self.units, n.value())
    }

    pub fn rate(&self, n_per_mm: impl Num) -> String {
        Kind::Rate.show(self.units, n_per_mm.value())
    }

    pub fn rate_num(&self, n_per_mm: impl Num) -> String {
        Kind::Rate.number(self.units, n_per_mm.value())
    }

    pub fn opt_rate(&self, n_per_mm: &Option<f64>) -> String {
        n_per_mm.map_or_else(|| DASH.into(), |v| self.rate(v))
    }

    pub fn torque(&self, nm: impl Num) -> String {
        Kind::Torque.show(self.units, nm.value())
    }

    pub fn opt_torque(&self, nm: &Option<f64>) -> String {
        nm.map_or_else(|| DASH.into(), |v| self.torque(v))
    }

    pub fn opt_weight(&self, kg: &Option<f64>) -> String {
        kg.map_or_else(|| DASH.into(), |v| Kind::VehicleMass.show(self.units, v))
    }

    /// Grams to 0.1 g.
    pub fn grams(&self, g: impl Num) -> String {
        Kind::Grams.show(self.units, g.value())
    }

    pub fn rpm(&self, rpm: impl Num) -> String {
        Kind::Speed.show(self.units, rpm.value())
    }

    pub fn opt_rpm(&self, rpm: &Option<f64>) -> String {
        rpm.map_or_else(|| DASH.into(), |v| self.rpm(v))
    }

    pub fn opt_ratio(&self, ratio: &Option<f64>) -> String {
        ratio.map_or_else(|| DASH.into(), |v| format!("{v:.2}"))
    }

    pub fn opt_seconds(&self, s: &Option<f64>) -> String {
        s.map_or_else(|| DASH.into(), |v| Kind::Seconds.show(self.units, v))
    }

    /// A change in percent with its sign ("+0.4 %", "−1.2 %").
    pub fn signed_pct(&self, pct: impl Num) -> String {
        let v = pct.value();
        let sign = if v < 0.0 { "−" } else { "+" };
        format!("{sign}{:.1} %", v.abs())
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
