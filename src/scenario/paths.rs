//! Numbers of a scenario addressed by their place in the file, e.g. `temperature_c`,
//! `species[0].outside_mm`, `protocol[1].dose_um` or `channels[2].gates[0].kinetics.tau_ms`.
//! The window keeps the inputs a user pinned to presentation as such paths, because they read
//! like the file and stay meaningful across versions of the window.
//!
//! The path names the serde fields of the scenario types; an enum's variant name (an event's
//! kind, `Boltzmann`, `Voltage`) is not part of the path, so `run.start` is the holding
//! potential of `start: Voltage(v)`. Going through the serde data model means a field added to
//! the format can be addressed without touching this file.

use serde_json::{Map, Number, Value};

use super::Scenario;

/// Why a path does not lead to a number that can be set.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum PathError {
    #[error("\"{0}\" is not a field path (write it like species[0].outside_mm)")]
    Syntax(String),
    #[error("this scenario has no {0}")]
    Missing(String),
    #[error("{0} is not a number")]
    NotANumber(String),
    #[error("{path} takes whole numbers of at least {min}, not {value}")]
    NotWhole { path: String, value: f64, min: i64 },
    #[error("{path} cannot be {value}: {reason}")]
    Refused {
        path: String,
        value: f64,
        reason: String,
    },
}

/// One step of a path.
#[derive(Debug, Clone, PartialEq)]
enum Step {
    Field(String),
    Index(usize),
}

fn parse(path: &str) -> Result<Vec<Step>, PathError> {
    let bad = || PathError::Syntax(path.to_string());
    let mut steps = Vec::new();
    for part in path.split('.') {
        let (name, mut rest) = match part.find('[') {
            Some(k) => part.split_at(k),
            None => (part, ""),
        };
        let is_name = !name.is_empty()
            && name
                .chars()
                .all(|c| c.is_ascii_lowercase() || c.is_ascii_digit() || c == '_');
        if !is_name {
            return Err(bad());
        }
        steps.push(Step::Field(name.to_string()));
        while !rest.is_empty() {
            let inner = rest.strip_prefix('[').ok_or_else(bad)?;
            let close = inner.find(']').ok_or_else(bad)?;
            let index = inner[..close].parse::<usize>().map_err(|_| bad())?;
            steps.push(Step::Index(index));
            rest = &inner[close + 1..];
        }
    }
    Ok(steps)
}

/// An enum variant serialized as `{ "Variant": content }`: the content, else `None`.
fn tagged(map: &Map<String, Value>) -> Option<&str> {
    let (key, _) = map.iter().next()?;
    (map.len() == 1 && key.starts_with(|c: char| c.is_ascii_uppercase())).then_some(key.as_str())
}

/// Looks through variant tags to the value they carry, noting each tag in `pointer`.
fn untag<'v>(mut v: &'v Value, pointer: &mut String) -> &'v Value {
    while let Value::Object(m) = v {
        match tagged(m).and_then(|k| m.get_key_value(k)) {
            Some((k, inner)) => {
                push_pointer(pointer, k);
                v = inner;
            }
            None => break,
        }
    }
    v
}

/// Appends one reference token to a JSON pointer (RFC 6901 escapes `~` and `/`).
fn push_pointer(pointer: &mut String, token: &str) {
    pointer.push('/');
    pointer.push_str(&token.replace('~', "~0").replace('/', "~1"));
}

/// The JSON pointer of the number at `steps` (variant tags included) and the number itself.
fn resolve(root: &Value, steps: &[Step], path: &str) -> Result<(String, Number), PathError> {
    let mut pointer = String::new();
    let mut v = root;
    for st in steps {
        v = match (untag(v, &mut pointer), st) {
            (Value::Object(m), Step::Field(f)) => {
                push_pointer(&mut pointer, f);
                m.get(f)
            }
            (Value::Array(a), Step::Index(i)) => {
                push_pointer(&mut pointer, &i.to_string());
                a.get(*i)
            }
            _ => None,
        }
        .ok_or_else(|| PathError::Missing(path.to_string()))?;
    }
    match untag(v, &mut pointer) {
        Value::Number(n) => Ok((pointer, n.clone())),
        _ => Err(PathError::NotANumber(path.to_string())),
    }
}

fn to_value(s: &Scenario) -> Value {
    // Serializing plain structs of numbers, strings and enums into a `Value` cannot fail.
    serde_json::to_value(s).unwrap_or(Value::Null)
}

/// The number at `path` in `s`.
pub fn number_at(s: &Scenario, path: &str) -> Result<f64, PathError> {
    let steps = parse(path)?;
    let (_, n) = resolve(&to_value(s), &steps, path)?;
    n.as_f64().ok_or_else(|| PathError::NotANumber(path.to_string()))
}

/// Writes `value` at `path`. Whole-number fields (a charge, a gate's power, a pulse count) take
/// only whole values. Only where the path is and the value's type are checked here: whether
/// the scenario still makes sense is `validate`'s to say.
pub fn set_number_at(s: &mut Scenario, path: &str, value: f64) -> Result<(), PathError> {
    let steps = parse(path)?;
    let mut root = to_value(s);
    let (pointer, old) = resolve(&root, &steps, path)?;
    let whole = |min: i64| {
        if value.fract() == 0.0 && value >= min as f64 && value.abs() < 9.0e15 {
            Ok(value as i64)
        } else {
            Err(PathError::NotWhole {
                path: path.to_string(),
                value,
                min,
            })
        }
    };
    let refused = |reason: String| PathError::Refused {
        path: path.to_string(),
        value,
        reason,
    };
    // Signed first: a charge stored as 1 is still a signed field that may become −1.
    let new = if old.is_i64() && !is_unsigned_field(path) {
        Number::from(whole(i64::MIN)?)
    } else if old.is_u64() {
        Number::from(whole(0)?)
    } else {
        Number::from_f64(value).ok_or_else(|| refused("not a finite number".into()))?
    };
    if let Some(slot) = root.pointer_mut(&pointer) {
        *slot = Value::Number(new);
    }
    *s = serde_json::from_value(root).map_err(|e| refused(e.to_string()))?;
    Ok(())
}

/// Every number of `s` that a user can change, as paths sorted by field name (lists in their
/// order). The format version is not one of them.
pub fn number_paths(s: &Scenario) -> Vec<String> {
    fn walk(v: &Value, at: &str, out: &mut Vec<String>) {
        match untag(v, &mut String::new()) {
            Value::Number(_) => out.push(at.to_string()),
            Value::Object(m) => {
                for (k, x) in m {
                    let next = if at.is_empty() {
                        k.clone()
                    } else {
                        format!("{at}.{k}")
                    };
                    walk(x, &next, out);
                }
            }
            Value::Array(a) => {
                for (i, x) in a.iter().enumerate() {
                    walk(x, &format!("{at}[{i}]"), out);
                }
            }
            _ => {}
        }
    }
    let mut out = Vec::new();
    walk(&to_value(s), "", &mut out);
    out.retain(|p| p != "format");
    out
}

/// Whether the field at `path` is an unsigned whole number in the file (a count or a power),
/// as opposed to a signed one (a charge).
fn is_unsigned_field(path: &str) -> bool {
    let last = path.rsplit('.').next().unwrap_or(path);
    matches!(
        last,
        "exported_per_cycle" | "imported_per_cycle" | "power" | "count" | "format"
    )
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::scenario::{Channel, Event, Gate, Kinetics, Start};

    fn rich() -> Scenario {
        let mut s = Scenario::new_default();
        s.channels.push(Channel {
            label: "slow".into(),
            species: "K+".into(),
            max_permeability_cm_per_s: 1e-7,
            shift_mv: 0.0,
            q10: 1.0,
            reference_temperature_c: 20.0,
            gates: vec![
                Gate {
                    kinetics: Kinetics::HhPotassiumActivation,
                    power: 4,
                },
                Gate {
                    kinetics: Kinetics::Boltzmann {
                        v_half_mv: -30.0,
                        slope_mv: 8.0,
                        tau_ms: 50.0,
                    },
                    power: 1,
                },
            ],
        });
        s.protocol.push(Event::InjectTrain {
            amplitude_ua_per_cm2: 10.0,
            width_ms: 1.0,
            period_ms: 20.0,
            count: 5,
            from_ms: 20.0,
        });
        s.protocol.push(Event::Agent {
            label: "blocker".into(),
            species: "K+".into(),
            max_block: 0.9,
            ic50_um: 5.0,
            hill: 1.0,
            dose_um: 10.0,
            from_ms: 50.0,
            until_ms: None,
            onset_ms: 3.0,
            washout_ms: 6.0,
        });
        s.run.start = Start::Voltage(-80.0);
        s
    }

    #[test]
    fn reads_the_numbers_the_paths_name() {
        let s = rich();
        let at = |p: &str| number_at(&s, p);
        assert_eq!(at("temperature_c"), Ok(37.0));
        assert_eq!(at("species[0].outside_mm"), Ok(5.0));
        assert_eq!(at("species[2].charge"), Ok(-1.0));
        assert_eq!(at("protocol[1].dose_um"), Ok(10.0));
        assert_eq!(at("protocol[0].count"), Ok(5.0));
        assert_eq!(at("channels[0].gates[1].kinetics.tau_ms"), Ok(50.0));
        assert_eq!(at("channels[0].gates[0].power"), Ok(4.0));
        assert_eq!(at("run.start"), Ok(-80.0));
        assert_eq!(at("cell.diameter_um"), Ok(20.0));
    }

    #[test]
    fn writes_through_the_same_paths() {
        let mut s = rich();
        set_number_at(&mut s, "species[0].outside_mm", 25.0).unwrap();
        assert_eq!(s.species[0].outside_mm, 25.0);
        set_number_at(&mut s, "protocol[1].dose_um", 0.5).unwrap();
        assert!(matches!(s.protocol[1], Event::Agent { dose_um, .. } if dose_um == 0.5));
        set_number_at(&mut s, "channels[0].gates[1].kinetics.v_half_mv", -40.0).unwrap();
        assert!(matches!(
            s.channels[0].gates[1].kinetics,
            Kinetics::Boltzmann { v_half_mv, .. } if v_half_mv == -40.0
        ));
        set_number_at(&mut s, "run.start", -65.5).unwrap();
        assert_eq!(s.run.start, Start::Voltage(-65.5));
        set_number_at(&mut s, "species[2].charge", -2.0).unwrap();
        assert_eq!(s.species[2].charge, -2);
        set_number_at(&mut s, "protocol[0].count", 7.0).unwrap();
        assert_eq!(number_at(&s, "protocol[0].count"), Ok(7.0));
        // Nothing else moved.
        assert_eq!(s.species[1], rich().species[1]);
        assert_eq!(s.temperature_c, 37.0);
    }

    #[test]
    fn wrong_places_and_kinds_are_refused_without_a_change() {
        let mut s = rich();
        let before = s.clone();
        let e = |r: Result<(), PathError>| r.unwrap_err();
        assert!(matches!(
            e(set_number_at(&mut s, "species[9].outside_mm", 1.0)),
            PathError::Missing(_)
        ));
        assert!(matches!(
            e(set_number_at(&mut s, "species[0].name", 1.0)),
            PathError::NotANumber(_)
        ));
        // An open-ended agent has no end time to set.
        assert!(matches!(
            e(set_number_at(&mut s, "protocol[1].until_ms", 9.0)),
            PathError::NotANumber(_)
        ));
        assert!(matches!(
            e(set_number_at(&mut s, "protocol[0].count", 2.5)),
            PathError::NotWhole { .. }
        ));
        assert!(matches!(
            e(set_number_at(&mut s, "channels[0].gates[0].power", -1.0)),
            PathError::NotWhole { min: 0, .. }
        ));
        assert!(matches!(
            e(set_number_at(&mut s, "temperature_c", f64::NAN)),
            PathError::Refused { .. }
        ));
        for bad in [
            "",
            "species[",
            "species[x].inside_mm",
            "Species[0]",
            "a..b",
            "species]0[",
        ] {
            assert!(matches!(number_at(&s, bad), Err(PathError::Syntax(_))), "{bad:?}");
        }
        // The HH gate has no half-activation potential of its own.
        assert!(number_at(&s, "channels[0].gates[0].kinetics.v_half_mv").is_err());
        assert_eq!(s, before);
    }

    #[test]
    fn every_listed_path_reads_back_and_takes_its_own_value() {
        let s = rich();
        let paths = number_paths(&s);
        assert!(paths.contains(&"species[1].permeability_cm_per_s".to_string()));
        assert!(paths.contains(&"protocol[1].washout_ms".to_string()));
        assert!(paths.contains(&"run.start".to_string()));
        assert!(!paths.contains(&"format".to_string()));
        // 1 temperature + 2 cell + 3×4 species + channel 4 + gates 1 + 4 + train 5 + agent 7
        // (its until_ms is None) + run 3.
        assert_eq!(paths.len(), 1 + 2 + 12 + 4 + 1 + 4 + 5 + 7 + 3, "{paths:?}");
        for p in &paths {
            let v = number_at(&s, p).unwrap_or_else(|e| panic!("{p}: {e}"));
            let mut t = s.clone();
            set_number_at(&mut t, p, v).unwrap_or_else(|e| panic!("{p}: {e}"));
            assert_eq!(t, s, "{p}");
        }
    }

    #[test]
    fn a_charge_can_become_negative_and_a_power_cannot() {
        let mut s = Scenario::new_default();
        set_number_at(&mut s, "species[0].charge", -1.0).unwrap();
        assert_eq!(s.species[0].charge, -1);
        s.channels.push(crate::scenario::Channel {
            label: "k".into(),
            species: "K+".into(),
            max_permeability_cm_per_s: 1e-6,
            shift_mv: 0.0,
            q10: 3.0,
            reference_temperature_c: 6.3,
            gates: vec![crate::scenario::Gate {
                kinetics: crate::physics::Kinetics::HhPotassiumActivation,
                power: 4,
            }],
        });
        assert!(set_number_at(&mut s, "channels[0].gates[0].power", -2.0).is_err());
        assert_eq!(s.channels[0].gates[0].power, 4);
    }
}
