//! Numbers as the shop reads them: converted to its units, rounded the shop's way, unit attached.
//! Heights to 0.001 in or 0.01 mm; forces, torque and speed whole; counterweights to 0.1 g.

use crate::model::Trial;
use crate::records::measure::{
    Amount, EngineSpeed, Force, Grams, Length, Mass, Seconds, SpringRate, Torque,
};
use clutch::capacity::lockup::lockup_text;
use clutch::quantity::Kind;
use clutch::units::Units;

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

/// A setting a template hands over, by value or by reference (as [`Num`]).
pub trait Setting: Copy {
    fn trial(self) -> Trial;
}

impl Setting for Trial {
    fn trial(self) -> Trial {
        self
    }
}

impl<T: Setting> Setting for &T {
    fn trial(self) -> Trial {
        (*self).trial()
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

    /// Slip energy from joules, kJ in both systems ([`Kind::Kilojoules`]).
    pub fn energy_j(&self, j: impl Num) -> String {
        Kind::Kilojoules.show(self.units, j.value() / 1000.0)
    }

    /// Slip power from watts, kW in both systems ([`Kind::Kilowatts`]).
    pub fn power_w(&self, w: impl Num) -> String {
        Kind::Kilowatts.show(self.units, w.value() / 1000.0)
    }

    /// A length with its unit ("1.905 in").
    pub fn len(&self, mm: impl Amount<Length>) -> String {
        Kind::Length.show(self.units, mm.internal())
    }

    /// A length without its unit, for table cells under a titled column.
    pub fn len_num(&self, mm: impl Amount<Length>) -> String {
        Kind::Length.number(self.units, mm.internal())
    }

    pub fn opt_len<T: Amount<Length>>(&self, mm: &Option<T>) -> String {
        mm.map_or_else(|| DASH.into(), |v| self.len(v))
    }

    pub fn force_num(&self, n: impl Amount<Force>) -> String {
        Kind::Force.number(self.units, n.internal())
    }

    pub fn rate(&self, n_per_mm: impl Amount<SpringRate>) -> String {
        Kind::Rate.show(self.units, n_per_mm.internal())
    }

    pub fn rate_num(&self, n_per_mm: impl Amount<SpringRate>) -> String {
        Kind::Rate.number(self.units, n_per_mm.internal())
    }

    pub fn opt_rate<T: Amount<SpringRate>>(&self, n_per_mm: &Option<T>) -> String {
        n_per_mm.map_or_else(|| DASH.into(), |v| self.rate(v))
    }

    pub fn torque(&self, nm: impl Amount<Torque>) -> String {
        Kind::Torque.show(self.units, nm.internal())
    }

    pub fn opt_torque<T: Amount<Torque>>(&self, nm: &Option<T>) -> String {
        nm.map_or_else(|| DASH.into(), |v| self.torque(v))
    }

    pub fn opt_weight<T: Amount<Mass>>(&self, kg: &Option<T>) -> String {
        kg.map_or_else(
            || DASH.into(),
            |v| Kind::VehicleMass.show(self.units, v.internal()),
        )
    }

    /// Grams to 0.1 g.
    pub fn grams(&self, g: impl Amount<Grams>) -> String {
        Kind::Grams.show(self.units, g.internal())
    }

    pub fn rpm(&self, rpm: impl Amount<EngineSpeed>) -> String {
        Kind::Speed.show(self.units, rpm.internal())
    }

    pub fn opt_rpm<T: Amount<EngineSpeed>>(&self, rpm: &Option<T>) -> String {
        rpm.map_or_else(|| DASH.into(), |v| self.rpm(v))
    }

    pub fn opt_ratio(&self, ratio: &Option<f64>) -> String {
        ratio.map_or_else(|| DASH.into(), |v| format!("{v:.2}"))
    }

    pub fn opt_seconds<T: Amount<Seconds>>(&self, s: &Option<T>) -> String {
        s.map_or_else(
            || DASH.into(),
            |v| Kind::Seconds.show(self.units, v.internal()),
        )
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

    /// Adjuster turns with the word agreeing ("1 turn", "1.75 turns").
    pub fn turns(&self, turns: impl Num) -> String {
        let t = turns.value();
        if t == 1.0 {
            "1 turn".into()
        } else {
            format!("{t} turns")
        }
    }

    /// A lockup speed in words (see [`lockup_text`]).
    pub fn lockup(&self, rpm: &Option<f64>, curve_start_rpm: f64) -> String {
        lockup_text(*rpm, curve_start_rpm)
    }

    /// A count with its noun agreeing ("1 pass", "12 passes").
    pub fn counted(&self, n: impl Num, one: &str, many: &str) -> String {
        clutch::quantity::counted(n.value(), one, many)
    }

    /// A friction coefficient to the decimals every page, figure and warning uses ("μ 0.281").
    pub fn mu(&self, mu: f64) -> String {
        format!("μ {}", Kind::Mu.number(self.units, mu))
    }

    /// Every value a setting sets: "1 turn, 26.0 g per lever, μ 0.350".
    pub fn setting(&self, t: impl Setting) -> String {
        let t = t.trial();
        let mu =
            t.mu.map_or("the facing's nominal μ".into(), |mu| self.mu(mu));
        format!(
            "{}, {} per lever, {mu}",
            self.turns(t.adjuster_turns),
            self.grams(t.counterweight_g)
        )
    }

    /// The step from one setting to another, value by value ("+0.5 turn, −8.0 g per lever";
    /// "no change").
    pub fn step(&self, from: impl Setting, to: impl Setting) -> String {
        let (from, to) = (from.trial(), to.trial());
        let mut parts = Vec::new();
        let turns = to.adjuster_turns - from.adjuster_turns;
        if turns.abs() > 1e-9 {
            let sign = if turns < 0.0 { "−" } else { "+" };
            parts.push(format!("{sign}{}", self.turns(turns.abs())));
        }
        let grams = (to.counterweight_g - from.counterweight_g).g();
        if grams.abs() > 1e-9 {
            let sign = if grams < 0.0 { "−" } else { "+" };
            parts.push(format!("{sign}{} per lever", self.grams(grams.abs())));
        }
        if to.mu != from.mu {
            parts.push(match to.mu {
                Some(mu) => self.mu(mu),
                None => "the facing's nominal μ".into(),
            });
        }
        if parts.is_empty() {
            "no change".into()
        } else {
            parts.join(", ")
        }
    }
}

/// A build's adjuster thread in words.
pub fn thread_text(b: &crate::records::build::BuildInput) -> String {
    match (b.adjuster_tpi, b.adjuster_pitch_mm) {
        (Some(tpi), _) => format!("{tpi} threads per inch"),
        (_, Some(p)) => format!("{} mm pitch", p.mm()),
        _ => "not recorded".into(),
    }
}

/// A build's facing material in words.
pub fn material_text(b: &crate::records::build::BuildInput) -> String {
    clutch::capacity::friction::FacingMaterial::from_key(&b.facing_material)
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

    #[test]
    fn settings_name_every_value_and_steps_name_what_moves() {
        let u = Show::new(Units::Metric);
        let from = Trial {
            adjuster_turns: 1.75,
            counterweight_g: Grams::from_g(26.0),
            mu: None,
        };
        let to = Trial {
            adjuster_turns: 1.0,
            counterweight_g: Grams::from_g(18.0),
            mu: Some(0.35),
        };
        assert_eq!(u.setting(to), "1 turn, 18.0 g per lever, μ 0.350");
        assert_eq!(
            u.setting(from),
            "1.75 turns, 26.0 g per lever, the facing's nominal μ"
        );
        assert_eq!(u.step(from, to), "−0.75 turns, −8.0 g per lever, μ 0.350");
        assert_eq!(u.step(to, from).split(", ").next(), Some("+0.75 turns"));
        assert_eq!(u.step(from, from), "no change");
        assert!(from.moves_both(&to));
        assert!(!from.moves_both(&Trial {
            mu: Some(0.3),
            ..from
        }));
    }
}
