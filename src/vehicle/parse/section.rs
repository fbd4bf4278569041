//! The table walker shared by every part of the profile: a [`Section`] is one TOML table with
//! its dotted key path, and reads numbers, strings and booleans from it by [`Rule`]; unknown keys
//! get a "did you mean" suggestion.

use std::path::Path;

use toml::{Table, Value};

use crate::kinematics::Family;
use crate::limits::clip;
use crate::vehicle::VehicleError;

/// What a number must be.
#[derive(Debug, Clone, Copy)]
pub(super) enum Rule {
    Finite,
    Positive,
    Negative,
    NonNegative,
    /// In (0, 1].
    Fraction,
}

impl Rule {
    fn expected(self) -> &'static str {
        match self {
            Rule::Finite => "a finite number",
            Rule::Positive => "a positive number",
            Rule::Negative => "a negative number",
            Rule::NonNegative => "a number >= 0",
            Rule::Fraction => "a number in (0, 1]",
        }
    }

    fn accepts(self, x: f64) -> bool {
        x.is_finite()
            && match self {
                Rule::Finite => true,
                Rule::Positive => x > 0.0,
                Rule::Negative => x < 0.0,
                Rule::NonNegative => x >= 0.0,
                Rule::Fraction => x > 0.0 && x <= 1.0,
            }
    }
}

/// Short description of a TOML value for error messages.
pub(super) fn describe(v: &Value) -> String {
    match v {
        Value::Integer(i) => i.to_string(),
        Value::Float(f) => f.to_string(),
        Value::String(s) => format!("the string {:?}", clip(s)),
        Value::Boolean(b) => format!("the boolean {b}"),
        Value::Datetime(d) => format!("the date-time {d}"),
        Value::Array(_) => "an array".to_string(),
        Value::Table(_) => "a table".to_string(),
    }
}

/// The number in `v` if it satisfies `rule`, otherwise the "must be ..., got ..." message.
/// TOML integers are accepted wherever a number is expected.
pub(super) fn check_number(v: &Value, rule: Rule) -> Result<f64, String> {
    let x = match v {
        Value::Integer(i) => *i as f64,
        Value::Float(f) => *f,
        _ => return Err(format!("must be {}, got {}", rule.expected(), describe(v))),
    };
    if rule.accepts(x) {
        Ok(x)
    } else {
        Err(format!("must be {}, got {}", rule.expected(), describe(v)))
    }
}

/// Edit distance counting insertions, deletions, substitutions and swaps of neighbours (optimal
/// string alignment), for "did you mean" suggestions: `alpah` is one edit from `alpha`.
pub(super) fn edit_distance(a: &str, b: &str) -> usize {
    let (a, b): (Vec<char>, Vec<char>) = (a.chars().collect(), b.chars().collect());
    let mut d = vec![vec![0usize; b.len() + 1]; a.len() + 1];
    for (i, row) in d.iter_mut().enumerate() {
        row[0] = i;
    }
    for (j, cell) in d[0].iter_mut().enumerate() {
        *cell = j;
    }
    for i in 1..=a.len() {
        for j in 1..=b.len() {
            let cost = usize::from(a[i - 1] != b[j - 1]);
            let mut best = (d[i - 1][j] + 1).min(d[i][j - 1] + 1).min(d[i - 1][j - 1] + cost);
            if i > 1 && j > 1 && a[i - 1] == b[j - 2] && a[i - 2] == b[j - 1] {
                best = best.min(d[i - 2][j - 2] + 1);
            }
            d[i][j] = best;
        }
    }
    d[a.len()][b.len()]
}

/// The allowed key closest to `key`, if it is close enough to be a likely typo.
pub(super) fn suggestion<'k>(key: &str, allowed: &[&'k str]) -> Option<&'k str> {
    let len = key.chars().count();
    let limit = (len / 3).clamp(1, 3);
    // Lengths further apart than the limit cannot be within it; skipping them keeps a huge
    // hostile key from costing a len x len table.
    allowed
        .iter()
        .filter(|k| k.chars().count().abs_diff(len) <= limit)
        .map(|k| (edit_distance(key, k), *k))
        .filter(|(d, _)| *d <= limit)
        .min_by_key(|(d, _)| *d)
        .map(|(_, k)| k)
}

/// One TOML table being validated, with its dotted path for messages.
pub(super) struct Section<'a> {
    pub(super) file: &'a Path,
    pub(super) prefix: String,
    pub(super) table: &'a Table,
}

impl<'a> Section<'a> {
    pub(super) fn key_path(&self, key: &str) -> String {
        if self.prefix.is_empty() {
            clip(key).into_owned()
        } else {
            format!("{}.{}", self.prefix, clip(key))
        }
    }

    pub(super) fn error(&self, key: &str, what: impl Into<String>) -> VehicleError {
        VehicleError::Key { file: self.file.to_path_buf(), key: self.key_path(key), what: what.into() }
    }

    /// Rejects any key not in `allowed`; for terrain tables `family` adds a hint when the key
    /// belongs to another model family.
    pub(super) fn check_keys(&self, allowed: &[&str], family: Option<Family>) -> Result<(), VehicleError> {
        let Some(key) = self.table.keys().find(|k| !allowed.contains(&k.as_str())) else {
            return Ok(());
        };
        if let Some(near) = suggestion(key, allowed) {
            return Err(self.error(key, format!("unknown key (did you mean {near}?)")));
        }
        if let Some(family) = family {
            let owners: Vec<&str> = Family::ALL
                .into_iter()
                .filter(|f| {
                    f.param_names().contains(&key.as_str()) || (key == "schedule" && *f == Family::ExtendedScheduled)
                })
                .map(Family::name)
                .collect();
            if !owners.is_empty() {
                let what = format!("unknown key for model {family} (it belongs to model {})", owners.join(", "));
                return Err(self.error(key, what));
            }
        }
        Err(self.error(key, "unknown key"))
    }

    pub(super) fn required(&self, key: &str, expected: &str) -> Result<&'a Value, VehicleError> {
        self.table.get(key).ok_or_else(|| self.error(key, format!("missing required key, expected {expected}")))
    }

    pub(super) fn table(&self, key: &str) -> Result<Section<'a>, VehicleError> {
        match self.required(key, "a table")? {
            Value::Table(t) => Ok(Section { file: self.file, prefix: self.key_path(key), table: t }),
            v => Err(self.error(key, format!("must be a table, got {}", describe(v)))),
        }
    }

    pub(super) fn number(&self, key: &str, rule: Rule) -> Result<f64, VehicleError> {
        check_number(self.required(key, rule.expected())?, rule).map_err(|what| self.error(key, what))
    }

    pub(super) fn optional_number(&self, key: &str, rule: Rule) -> Result<Option<f64>, VehicleError> {
        match self.table.get(key) {
            None => Ok(None),
            Some(v) => check_number(v, rule).map(Some).map_err(|what| self.error(key, what)),
        }
    }

    pub(super) fn string(&self, key: &str) -> Result<&'a str, VehicleError> {
        match self.required(key, "a string")? {
            Value::String(s) => Ok(s),
            v => Err(self.error(key, format!("must be a string, got {}", describe(v)))),
        }
    }

    pub(super) fn boolean(&self, key: &str) -> Result<bool, VehicleError> {
        match self.required(key, "true or false")? {
            Value::Boolean(b) => Ok(*b),
            v => Err(self.error(key, format!("must be true or false, got {}", describe(v)))),
        }
    }
}
