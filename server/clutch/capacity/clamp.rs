//! Clamp load on the pressure plate: static load from the compressed springs plus centrifugal
//! load from the levers, F(n) = F_static + F_centrifugal(n).

use crate::InputError;
use crate::quantity::limits;
use crate::units::rpm_to_rad_s;

/// Base spring compression from two cover-height readings, mm: free − installed
/// (springs free with adjusters backed off, then as installed). Must not be negative.
pub fn base_compression_mm(
    free_height_mm: f64,
    installed_height_mm: f64,
) -> Result<f64, InputError> {
    let free = crate::require_finite("free_height", free_height_mm)?;
    let installed = crate::require_finite("installed_height", installed_height_mm)?;
    if installed > free {
        return Err(InputError::new(
            "installed_height",
            "is above the free height: the springs would not be compressed",
        ));
    }
    Ok(free - installed)
}

/// The springs and adjusters, in internal units. Build it only from validated values.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SpringPack {
    /// Number of springs (all equal).
    pub count: u32,
    /// Rate of one spring, N/mm.
    pub rate_n_per_mm: f64,
    /// Compression with adjusters at zero turns, mm.
    pub base_compression_mm: f64,
    /// Adjuster travel per turn, mm (thread pitch; see [`crate::capacity::threads`]).
    pub pitch_mm: f64,
    /// Compression at which the coils touch (free length − solid height), mm, when known.
    pub bind_compression_mm: Option<f64>,
    /// Further compression when the clutch is fully released (the plate lifts), mm; 0 when
    /// unknown.
    pub release_travel_mm: f64,
    /// Clearance to coil bind to keep at full release, mm.
    pub bind_margin_mm: f64,
}

/// Clearance to coil bind kept at full release unless the request or the shop says otherwise,
/// mm: 0.5 mm (0.0197 in) in both unit systems (common shop practice, no published source).
pub const DEFAULT_BIND_MARGIN_MM: f64 = 0.5;

impl SpringPack {
    /// Spring compression, mm: base + turns × pitch (each turn adds one pitch).
    pub fn compression_mm(&self, turns: f64) -> f64 {
        self.base_compression_mm + turns * self.pitch_mm
    }

    /// Load of one spring, N: Hooke's law F = k·x in the spring's linear range.
    pub fn per_spring_n(&self, turns: f64) -> f64 {
        self.rate_n_per_mm * self.compression_mm(turns)
    }

    /// Most adjuster turns that keep the bind margin with the clutch fully released:
    /// (x_bind − x_base − release travel − margin) / pitch, floored at 0. `None` when the solid
    /// height or the pitch is unknown. Releasing the clutch compresses the springs further, so
    /// the clearance that matters is the one left at full release; past solid height the spring
    /// is no longer a spring: load rises without limit and the coils, adjusters or cover can be
    /// damaged.
    pub fn coil_bind_turns(&self) -> Option<f64> {
        let bind = self.bind_compression_mm?;
        (self.pitch_mm > 0.0).then(|| {
            ((bind - self.base_compression_mm - self.release_travel_mm - self.bind_margin_mm)
                / self.pitch_mm)
                .max(0.0)
        })
    }

    /// Clearance to coil bind at full release, mm: x_bind − (x_base + turns·pitch + release
    /// travel); negative past bind. `None` without the solid height.
    pub fn coil_bind_clearance_mm(&self, turns: f64) -> Option<f64> {
        let bind = self.bind_compression_mm?;
        Some(bind - (self.compression_mm(turns) + self.release_travel_mm))
    }

    /// Whether `turns` leaves less than the bind margin at full release (the rule the answer
    /// warns by and every per-adjuster check uses). False without the solid height.
    pub fn short_of_margin(&self, turns: f64) -> bool {
        self.coil_bind_clearance_mm(turns)
            .is_some_and(|c| c < self.bind_margin_mm - 1e-9)
    }

    /// Static clamp of all springs acting in parallel, N: count × k × x
    /// (parallel springs add; Bhandari, Design of Machine Elements, ch. 10).
    pub fn static_clamp_n(&self, turns: f64) -> f64 {
        f64::from(self.count) * self.per_spring_n(turns)
    }
}

/// Spread of per-adjuster settings, turns.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AdjusterCheck {
    /// Mean setting, turns.
    pub mean: f64,
    /// Lowest setting, turns.
    pub min: f64,
    /// Highest setting, turns.
    pub max: f64,
    /// True when the settings differ (by more than 1e-9 turn): the plate is loaded unevenly.
    pub unequal: bool,
}

/// Checks that every adjuster sits at the same setting (common shop practice, no published
/// source: unequal settings tilt the pressure plate). `field` names the list of turns.
pub fn check_adjusters(turns_each: &[f64], field: &str) -> Result<AdjusterCheck, InputError> {
    if turns_each.is_empty() {
        return Err(InputError::new(field, "needs at least one adjuster"));
    }
    for (i, &t) in turns_each.iter().enumerate() {
        limits::ADJUSTER_TURNS.check(
            format_args!("{field}[{i}]"),
            t,
            crate::units::Units::Metric,
        )?;
    }
    let min = turns_each.iter().copied().fold(f64::INFINITY, f64::min);
    let max = turns_each.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    Ok(AdjusterCheck {
        mean: turns_each.iter().sum::<f64>() / turns_each.len() as f64,
        min,
        max,
        unequal: max - min > 1e-9,
    })
}

/// Centrifugal force on a rotating mass, N: F = m·r·ω², ω = 2π·n/60.
///
/// Source: Bhandari, Design of Machine Elements, Ex. 11.12–11.13 (centrifugal clutch).
/// mass in g, radius of its centre of gravity in mm, speed in rev/min; all ≥ 0.
pub fn centrifugal_force_n(mass_g: f64, radius_mm: f64, rpm: f64) -> f64 {
    let w = rpm_to_rad_s(rpm);
    mass_g / 1000.0 * radius_mm / 1000.0 * w * w
}

/// Speed, rev/min, at which F = m·r·ω² reaches `force_n` (e.g. a shoe spring's preload):
/// n = (60/2π)·√(F/(m·r)). Source as [`centrifugal_force_n`]. mass, radius > 0; force ≥ 0.
pub fn speed_for_force_rpm(mass_g: f64, radius_mm: f64, force_n: f64) -> f64 {
    (force_n / (mass_g / 1000.0 * radius_mm / 1000.0)).sqrt() / rpm_to_rad_s(1.0)
}

/// Where a lever's own body sits, when it is not with the counterweight: the radius of its
/// centre of gravity and its own arm ratio (each `None`: the counterweight's).
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct LeverBody {
    /// Radius of the body's centre of gravity, mm.
    pub cg_radius_mm: Option<f64>,
    /// The body's own arm ratio a_body/b.
    pub arm_ratio: Option<f64>,
}

/// The levers, in internal units. Build it with [`LeverSet::from_geometry`] or
/// [`LeverSet::from_gain`] from validated values.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LeverSet {
    /// Number of levers (0 for a spring-only clutch).
    pub count: u32,
    /// Mass of one lever itself as if it sat on the counterweight (its radius and arm), g: its
    /// mass times the radius of its own centre of gravity over the counterweight's, times its
    /// own arm ratio over the counterweight's (the clamp is linear in m·r·(a/b)), so it counts
    /// with the counterweight. In the gain form with a measured body force: that force over the
    /// gain.
    pub lever_mass_g: f64,
    /// Axial clamp per gram on one lever per (rev/min)², N/(g·rpm²).
    pub n_per_g_rpm2: f64,
}

impl LeverSet {
    /// Levers from geometry. Moment balance about the pivot: F_clamp = m·r_cg·ω²·(a/b), with
    /// a the arm of the centrifugal force and b the arm of the plate reaction (the same balance
    /// as the bell-crank spring governor). r_cg in mm, arm ratio a/b > 0. Each part of the lever
    /// adds its own moment: the body m_body·r_body·ω²·(a_body/b), at its own CG radius and on
    /// its own arm; without them it counts at the counterweight's radius and arm.
    pub fn from_geometry(
        count: u32,
        lever_mass_g: f64,
        cg_radius_mm: f64,
        arm_ratio: f64,
        body: LeverBody,
    ) -> Self {
        let radius_share = body.cg_radius_mm.map_or(1.0, |r| r / cg_radius_mm);
        let arm_share = body.arm_ratio.map_or(1.0, |a| a / arm_ratio);
        Self {
            count,
            lever_mass_g: lever_mass_g * radius_share * arm_share,
            n_per_g_rpm2: centrifugal_force_n(1.0, cg_radius_mm, 1.0) * arm_ratio,
        }
    }

    /// Levers from a measured gain of the counterweight (clamp per gram per lever at
    /// 1000 rev/min, N/g) and the lever body's own measured clamp at 1000 rev/min with no
    /// counterweight, N: F_clamp = (gain × m + F_body) × (n/1000)². The gain belongs to the
    /// counterweight's position only; the body adds its fixed term.
    pub fn from_gain_and_body(count: u32, gain_n_per_g_at_1000: f64, body_n_at_1000: f64) -> Self {
        Self {
            count,
            lever_mass_g: body_n_at_1000 / gain_n_per_g_at_1000,
            n_per_g_rpm2: gain_n_per_g_at_1000 / 1.0e6,
        }
    }

    /// Levers from a measured or calibrated gain: clamp per gram per lever at 1000 rev/min, N/g.
    /// F_clamp = gain × m × (n/1000)².
    pub fn from_gain(count: u32, lever_mass_g: f64, gain_n_per_g_at_1000: f64) -> Self {
        Self {
            count,
            lever_mass_g,
            n_per_g_rpm2: gain_n_per_g_at_1000 / 1.0e6,
        }
    }

    /// Clamp from one lever carrying `counterweight_g`, N, at `rpm`.
    pub fn per_lever_n(&self, counterweight_g: f64, rpm: f64) -> f64 {
        (counterweight_g + self.lever_mass_g) * self.n_per_g_rpm2 * rpm * rpm
    }

    /// Clamp from all levers, N per (rev/min)²: the coefficient c in F = c·n².
    pub fn total_n_per_rpm2(&self, counterweight_g: f64) -> f64 {
        f64::from(self.count) * (counterweight_g + self.lever_mass_g) * self.n_per_g_rpm2
    }

    /// Clamp from all levers, N, at `rpm`: levers × per lever.
    pub fn total_n(&self, counterweight_g: f64, rpm: f64) -> f64 {
        self.total_n_per_rpm2(counterweight_g) * rpm * rpm
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::units::N_PER_LBF;

    // Bhandari, Design of Machine Elements, Ex. 11.13 (via FOSSEE Scilab TBC 764):
    // shoe 1.5 kg, CG at 110 mm, 1440 rpm → Fc = 3752.029 N.
    #[test]
    fn centrifugal_force_matches_bhandari_ex_11_13() {
        let f = centrifugal_force_n(1500.0, 110.0, 1440.0);
        assert!((f - 3752.029).abs() < 5e-3, "{f}");
    }

    // Bhandari, Ex. 11.13 (via FOSSEE Scilab TBC 764): a 700 N spring holds the shoe off the
    // drum up to 621.98 rpm; torque of 4 shoes, μ 0.3, drum 140 mm: 512 740.84 N·mm.
    #[test]
    fn engagement_speed_and_torque_match_bhandari_ex_11_13() {
        let n = speed_for_force_rpm(1500.0, 110.0, 700.0);
        assert!((n - 621.98).abs() < 5e-3, "{n}");
        let t = 4.0 * 0.3 * (centrifugal_force_n(1500.0, 110.0, 1440.0) - 700.0) * 140.0;
        assert!((t - 512_740.84).abs() < 0.5, "{t}");
    }

    // [D] (checks our arithmetic against F = m·r·ω²): 100 g at 3 in, 6000 rpm →
    // 3008.2554 N = 676.2827 lbf; with a/b = 2 one lever clamps 6016.51 N.
    #[test]
    fn hundred_grams_at_three_inches_and_6000_rpm() {
        let f = centrifugal_force_n(100.0, 76.2, 6000.0);
        assert!((f - 3008.2554).abs() < 5e-4, "{f}");
        assert!((f / N_PER_LBF - 676.2827).abs() < 5e-4);
        let levers = LeverSet::from_geometry(3, 0.0, 76.2, 2.0, LeverBody::default());
        assert!((levers.per_lever_n(100.0, 6000.0) - 6016.51).abs() < 5e-3);
        assert!((levers.total_n(100.0, 6000.0) - 3.0 * 6016.51).abs() < 2e-2);
    }

    // [D] F = m·r·ω² summed over the lever's parts: a 40 g lever body at 38.1 mm and a 100 g
    // weight at 76.2 mm, 6000 rpm, a/b = 2: (40·38.1 + 100·76.2)/(100·76.2) = 1.2 times the
    // weight's own 6016.51 N, i.e. 7219.81 N. Counted at the weight's radius, the body would
    // add 40 % instead of 20 %.
    #[test]
    fn a_lever_body_nearer_the_axis_pulls_in_proportion_to_its_radius() {
        let split = LeverSet::from_geometry(1, 40.0, 76.2, 2.0, at(Some(38.1), None));
        assert!((split.per_lever_n(100.0, 6000.0) - 1.2 * 6016.51).abs() < 5e-3);
        let lumped = LeverSet::from_geometry(1, 40.0, 76.2, 2.0, LeverBody::default());
        assert!((lumped.per_lever_n(100.0, 6000.0) - 1.4 * 6016.51).abs() < 5e-3);
        let same = LeverSet::from_geometry(1, 40.0, 76.2, 2.0, at(Some(76.2), None));
        assert_eq!(same, lumped);
    }

    fn at(cg_radius_mm: Option<f64>, arm_ratio: Option<f64>) -> LeverBody {
        LeverBody {
            cg_radius_mm,
            arm_ratio,
        }
    }

    // Issue 21, item 3 [derived by hand from F = m·r·ω²·(a/b) per part, ω = 628.3185 rad/s]:
    // weight 100 g at 76.2 mm on a/b = 2.0: 0.1 × 0.0762 × 394 784.18 × 2.0 = 6016.51 N; body
    // 40 g at 38.1 mm on its own a/b = 1.2: 0.04 × 0.0381 × 394 784.18 × 1.2 = 721.98 N; one
    // lever clamps 6738.49 N at 6000 rpm. Measured instead at 1000 rpm (÷ 36): gain
    // 6016.51/100/36 = 1.671253 N/g and body 721.98/36 = 20.0550 N give the same 6738.49 N.
    // Counted on the weight's arm (before) the body gave 1203.30 N (7219.81 N in all).
    #[test]
    fn a_lever_body_pulls_on_its_own_arm() {
        let own = LeverSet::from_geometry(1, 40.0, 76.2, 2.0, at(Some(38.1), Some(1.2)));
        let f = own.per_lever_n(100.0, 6000.0);
        assert!((f - 6738.49).abs() < 5e-3, "{f}");
        assert!((own.per_lever_n(0.0, 6000.0) - 721.98).abs() < 5e-3);
        let measured = LeverSet::from_gain_and_body(1, 1.671253, 20.0550);
        let g = measured.per_lever_n(100.0, 6000.0);
        assert!((g - 6738.49).abs() < 0.01, "{g}");
        // Its own arm equal to the weight's: the answer of before, bit for bit.
        assert_eq!(
            LeverSet::from_geometry(1, 40.0, 76.2, 2.0, at(Some(38.1), Some(2.0))),
            LeverSet::from_geometry(1, 40.0, 76.2, 2.0, at(Some(38.1), None))
        );
    }

    #[test]
    fn gain_form_equals_geometry_form_when_gain_is_the_force_at_1000_rpm() {
        let geo = LeverSet::from_geometry(3, 12.0, 104.14, 2.6, LeverBody::default());
        let gain = geo.per_lever_n(1.0, 1000.0) - geo.per_lever_n(0.0, 1000.0);
        let cal = LeverSet::from_gain(3, 12.0, gain);
        let (a, b) = (geo.total_n(24.0, 6500.0), cal.total_n(24.0, 6500.0));
        assert!(((a - b) / a).abs() < 1e-12);
    }

    #[test]
    fn static_clamp_adds_one_pitch_per_turn() {
        let pack = SpringPack {
            count: 6,
            rate_n_per_mm: 60.0,
            base_compression_mm: 5.0,
            pitch_mm: 1.5875,
            bind_compression_mm: Some(12.0),
            release_travel_mm: 0.0,
            bind_margin_mm: 0.0,
        };
        assert!((pack.compression_mm(2.0) - 8.175).abs() < 1e-12);
        assert!((pack.static_clamp_n(2.0) - 6.0 * 60.0 * 8.175).abs() < 1e-9);
        // [D] coils touch at 12 mm of compression: (12 − 5)/1.5875 = 4.409 turns.
        assert!((pack.coil_bind_turns().unwrap() - 7.0 / 1.5875).abs() < 1e-12);
    }

    // Worked check of issue 21 [derived from the stated rule]: free 2.100 in, solid 1.600 in,
    // base 0.220 in, 16 TPI (0.0625 in per turn), release travel 0.050 in, margin 0.020 in:
    // (0.500 − 0.220 − 0.050 − 0.020) × 16 = 3.36 turns; at 3.36 turns the released clearance
    // is the margin, 0.020 in; at 3.5 turns it is 0.020 − 0.14·0.0625 = 0.01125 in, short.
    #[test]
    fn coil_bind_turns_keep_the_margin_at_full_release() {
        let inch = crate::units::MM_PER_IN;
        let pack = SpringPack {
            count: 6,
            rate_n_per_mm: 60.0,
            base_compression_mm: 0.220 * inch,
            pitch_mm: 0.0625 * inch,
            bind_compression_mm: Some((2.100 - 1.600) * inch),
            release_travel_mm: 0.050 * inch,
            bind_margin_mm: 0.020 * inch,
        };
        let t = pack.coil_bind_turns().expect("known");
        assert!((t - 3.36).abs() < 1e-9, "{t}");
        let c = pack.coil_bind_clearance_mm(3.36).expect("known") / inch;
        assert!((c - 0.020).abs() < 1e-9, "{c}");
        assert!(!pack.short_of_margin(3.36));
        let c = pack.coil_bind_clearance_mm(3.5).expect("known") / inch;
        assert!((c - 0.01125).abs() < 1e-9, "{c}");
        assert!(pack.short_of_margin(3.5));
        // Floored at 0 when even zero turns leave less than the margin.
        let tight = SpringPack {
            release_travel_mm: 0.3 * inch,
            ..pack
        };
        assert_eq!(tight.coil_bind_turns(), Some(0.0));
    }

    #[test]
    fn base_compression_is_free_minus_installed() {
        assert!((base_compression_mm(50.0, 44.5).unwrap_or(f64::NAN) - 5.5).abs() < 1e-12);
        let e = base_compression_mm(44.0, 44.5).err();
        assert_eq!(e.map(|e| e.field), Some("installed_height".to_string()));
    }

    #[test]
    fn unequal_adjusters_are_flagged() {
        assert!(check_adjusters(&[1.5, 1.5, 1.5], "t").is_ok_and(|c| !c.unequal));
        let c = check_adjusters(&[1.5, 1.5, 1.75], "t").expect("valid");
        assert!(c.unequal && c.max == 1.75 && c.min == 1.5);
        assert!(check_adjusters(&[1.5, f64::NAN], "t").is_err());
    }
}
