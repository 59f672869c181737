//! Which of a log file's columns plays which role: a first guess from the header names, and
//! the choices that cannot be right (one column in two roles, the time column as a speed).
//!
//! The name rules are plain words a logger's header uses for each channel, in English; a name
//! that matches no rule, or one already taken, is left for the technician to choose.

use crate::datalog::file;
use crate::datalog::request::LogColumns;

/// The header's words: lower case, split at anything that is not a letter or a digit.
fn words(name: &str) -> Vec<String> {
    name.split(|c: char| !c.is_alphanumeric())
        .filter(|w| !w.is_empty())
        .map(str::to_lowercase)
        .collect()
}

/// The role a header name plainly names, if any (`LogColumns` keys).
fn role_of(name: &str) -> Option<&'static str> {
    let w = words(name);
    let has = |x: &str| w.iter().any(|v| v == x);
    let joined = w.concat();
    let speed = has("rpm") || has("speed") || has("spd");
    if matches!(w.as_slice(), [t] if ["time", "t", "timestamp", "elapsed", "seconds"].contains(&t.as_str()))
        || (has("time") && w.len() <= 2 && !speed)
    {
        return Some("time");
    }
    if has("throttle") || has("tps") {
        return Some("throttle");
    }
    if has("clutch") && !has("slip") && !has("temp") {
        return Some("clutch_switch");
    }
    if joined.contains("driveshaft") || joined.contains("tailshaft") {
        return Some("driveshaft_rpm");
    }
    if has("input") {
        return Some("input_rpm");
    }
    if has("wheel") || ((has("front") || has("rear")) && speed) {
        let undriven = has("undriven") || has("front") || joined.contains("nondriven");
        return Some(if undriven {
            "undriven_wheel_speed"
        } else {
            "driven_wheel_speed"
        });
    }
    if ((has("engine") || has("eng")) && (speed || w.len() == 1)) || w == ["rpm"] {
        return Some("engine_rpm");
    }
    None
}

/// A first choice of columns from the header `names`: each role the first name that plainly
/// names it ("Time", "Engine RPM", "Input shaft speed", "Driveshaft RPM", "Rear wheel speed",
/// "Front wheel speed", "Throttle %", "Clutch switch"); roles no name matches stay blank.
pub fn guess(names: &[String]) -> LogColumns {
    let first = |role: &str| names.iter().find(|n| role_of(n) == Some(role)).cloned();
    // The analysis reads the clutch's driven side from exactly one source: the first of input
    // shaft, driveshaft and driven wheels the file has.
    let input_rpm = first("input_rpm");
    let driveshaft_rpm = first("driveshaft_rpm").filter(|_| input_rpm.is_none());
    let driven_wheel_speed =
        first("driven_wheel_speed").filter(|_| input_rpm.is_none() && driveshaft_rpm.is_none());
    LogColumns {
        time: first("time").unwrap_or_default(),
        engine_rpm: first("engine_rpm").unwrap_or_default(),
        input_rpm,
        driveshaft_rpm,
        driven_wheel_speed,
        undriven_wheel_speed: first("undriven_wheel_speed"),
        throttle: first("throttle"),
        clutch_switch: first("clutch_switch"),
    }
}

/// The roles that give the clutch's driven side, of which a mapping names exactly one.
pub const DRIVEN_SIDE: [&str; 3] = ["input_rpm", "driveshaft_rpm", "driven_wheel_speed"];

/// A choice of columns that cannot be right.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Clash {
    /// `role` names the same file column as `other`, chosen before it.
    SameColumn {
        role: &'static str,
        other: &'static str,
    },
    /// `role` is not the time but names the file's time column.
    TimeColumn { role: &'static str },
}

/// What is wrong with `columns` against the file's header `names` (a name is matched as
/// [`file::find`] matches it), in the order of the roles.
pub fn clashes(columns: &LogColumns, names: &[String]) -> Vec<Clash> {
    let mapped = columns.mapped();
    let column = |name: &str| file::find(names, name);
    let mut out = Vec::new();
    for (i, &(role, name)) in mapped.iter().enumerate() {
        let here = column(name);
        if let Some(&(other, _)) = mapped[..i]
            .iter()
            .find(|(_, n)| here.is_some() && column(n) == here)
        {
            out.push(Clash::SameColumn { role, other });
        } else if role != "time" && role_of(name) == Some("time") {
            out.push(Clash::TimeColumn { role });
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    fn names(list: &[&str]) -> Vec<String> {
        list.iter().map(|s| s.to_string()).collect()
    }

    // Header names as loggers commonly write them (common shop practice, no published source).
    #[test]
    fn plain_header_names_are_chosen() {
        let n = names(&[
            "Time (s)",
            "Engine RPM",
            "Input Shaft Speed",
            "Driveshaft_RPM",
            "Rear Wheel Speed",
            "Front Wheel Speed",
            "Throttle %",
            "Clutch Switch",
            "Oil Temp",
        ]);
        let g = guess(&n);
        assert_eq!(g.time, "Time (s)");
        assert_eq!(g.engine_rpm, "Engine RPM");
        assert_eq!(g.input_rpm.as_deref(), Some("Input Shaft Speed"));
        // One source of the driven side: the input shaft wins.
        assert_eq!(g.driveshaft_rpm, None);
        assert_eq!(g.driven_wheel_speed, None);
        let no_input = guess(&n[..1].iter().chain(&n[3..]).cloned().collect::<Vec<_>>());
        assert_eq!(no_input.driveshaft_rpm.as_deref(), Some("Driveshaft_RPM"));
        assert_eq!(no_input.driven_wheel_speed, None);
        let wheels_only = guess(&n[4..]);
        assert_eq!(
            wheels_only.driven_wheel_speed.as_deref(),
            Some("Rear Wheel Speed")
        );
        assert_eq!(g.undriven_wheel_speed.as_deref(), Some("Front Wheel Speed"));
        assert_eq!(g.throttle.as_deref(), Some("Throttle %"));
        assert_eq!(g.clutch_switch.as_deref(), Some("Clutch Switch"));
    }

    #[test]
    fn names_that_name_nothing_plainly_stay_blank() {
        let g = guess(&names(&["ch1", "ch2", "Engine Temp", "Clutch slip"]));
        assert_eq!(g, LogColumns::default());
    }

    #[test]
    fn one_column_in_two_roles_and_the_time_as_a_speed_are_clashes() {
        let n = names(&["Time", "RPM", "Input"]);
        let c = LogColumns {
            time: "Time".into(),
            engine_rpm: "rpm".into(),
            input_rpm: Some("RPM".into()),
            throttle: Some("time".into()),
            ..LogColumns::default()
        };
        assert_eq!(
            clashes(&c, &n),
            vec![
                Clash::SameColumn {
                    role: "input_rpm",
                    other: "engine_rpm"
                },
                Clash::SameColumn {
                    role: "throttle",
                    other: "time"
                },
            ]
        );
        let time_as_engine = LogColumns {
            time: "Input".into(),
            engine_rpm: "Time".into(),
            ..LogColumns::default()
        };
        assert_eq!(
            clashes(&time_as_engine, &n),
            vec![Clash::TimeColumn { role: "engine_rpm" }]
        );
        let fine = guess(&n);
        assert!(clashes(&fine, &n).is_empty(), "{fine:?}");
    }
}
