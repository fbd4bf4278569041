//! The table walker shared by every part of the profile: a [`Section`] is one TOML table with
//! its dotted key path, and reads numbers, strings and booleans from it by [`Rule`]; unknown keys
//! get a "did you mean" suggestion.
//!
//! Reading never stops at the first problem: every error (with its key and line) and every
//! warning is recorded in the shared [`Diagnostics`], and a value that could not be read is
//! replaced by a placeholder that satisfies its rule, so the rest of the profile is still
//! checked. `parse_profile` returns the errors together when there are any, so a placeholder
//! never leaves the reader.

use std::cell::RefCell;
use std::path::Path;

use toml::de::{DeTable, DeValue};
use toml::Spanned;

use crate::kinematics::Family;
use crate::limits::{clip, show_number};
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

    /// A value that satisfies the rule, standing in for one that could not be read.
    fn placeholder(self) -> f64 {
        match self {
            Rule::Negative => -1.0,
            Rule::Finite | Rule::NonNegative => 0.0,
            Rule::Positive | Rule::Fraction => 1.0,
        }
    }
}

/// The physically possible and the usual range of a quantity. A value above `max` is an error
/// (it would make the simulation meaningless and the reports unreadable); a value outside
/// `usual` is a warning, since it is most often a unit mistake (`hint`).
#[derive(Debug, Clone, Copy)]
pub(super) struct Plausible {
    pub unit: &'static str,
    pub max: f64,
    pub usual: (f64, f64),
    pub hint: &'static str,
}

/// Short description of a TOML value for error messages.
pub(super) fn describe(v: &DeValue) -> String {
    match v {
        DeValue::Integer(_) | DeValue::Float(_) => match number_of(v) {
            Some(x) => show_number(x),
            None => clip(&v_text(v)).into_owned(),
        },
        DeValue::String(s) => format!("the string {:?}", clip(s)),
        DeValue::Boolean(b) => format!("the boolean {b}"),
        DeValue::Datetime(d) => format!("the date-time {d}"),
        DeValue::Array(_) => "an array".to_string(),
        DeValue::Table(_) => "a table".to_string(),
    }
}

fn v_text(v: &DeValue) -> String {
    match v {
        DeValue::Integer(i) => i.to_string(),
        DeValue::Float(f) => f.to_string(),
        _ => String::new(),
    }
}

/// The value of a TOML integer or float (integers are accepted wherever a number is expected).
fn number_of(v: &DeValue) -> Option<f64> {
    match v {
        DeValue::Integer(i) => i64::from_str_radix(i.as_str(), i.radix()).ok().map(|n| n as f64),
        DeValue::Float(f) => f.as_str().replace('_', "").parse::<f64>().ok(),
        _ => None,
    }
}

/// The number in `v` if it satisfies `rule`, otherwise the "must be ..., got ..." message.
pub(super) fn check_number(v: &DeValue, rule: Rule) -> Result<f64, String> {
    match number_of(v) {
        Some(x) if rule.accepts(x) => Ok(x),
        _ => Err(format!("must be {}, got {}", rule.expected(), describe(v))),
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
pub(crate) fn suggestion<'k>(key: &str, allowed: &[&'k str]) -> Option<&'k str> {
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

/// Every error and warning found in one profile, with the line of each.
pub(super) struct Diagnostics<'a> {
    pub file: &'a Path,
    text: &'a str,
    errors: RefCell<Vec<(usize, VehicleError)>>,
    /// Missing keys by table (its path and the line that names it), listed together.
    missing: RefCell<Vec<(String, usize, String)>>,
    warnings: RefCell<Vec<(usize, String)>>,
}

impl<'a> Diagnostics<'a> {
    pub fn new(file: &'a Path, text: &'a str) -> Self {
        Diagnostics {
            file,
            text,
            errors: RefCell::new(Vec::new()),
            missing: RefCell::new(Vec::new()),
            warnings: RefCell::new(Vec::new()),
        }
    }

    /// The 1-based line of a byte offset in the text.
    pub fn line_of(&self, offset: usize) -> usize {
        self.text.get(..offset).unwrap_or(self.text).bytes().filter(|&b| b == b'\n').count() + 1
    }

    pub fn error_count(&self) -> usize {
        self.errors.borrow().len() + self.missing.borrow().len()
    }

    fn missing(&self, table: &str, offset: usize, key_and_expected: String) {
        self.missing.borrow_mut().push((table.to_string(), self.line_of(offset), key_and_expected));
    }

    fn error(&self, key: String, offset: usize, what: String) {
        let line = self.line_of(offset);
        self.errors.borrow_mut().push((line, VehicleError::Key { file: self.file.to_path_buf(), key, what, line }));
    }

    fn warn(&self, key: &str, offset: usize, what: String) {
        let line = self.line_of(offset);
        self.warnings.borrow_mut().push((line, format!("{}: {key}: {what} (line {line})", self.file.display())));
    }

    /// The errors in line order (one error alone, or all of them), or the warnings in line order.
    pub fn finish(self) -> Result<Vec<String>, VehicleError> {
        let mut errors = self.errors.into_inner();
        // One line per table for its missing keys.
        let mut missing = self.missing.into_inner();
        while let Some((table, line, _)) = missing.first().cloned() {
            let (these, rest): (Vec<_>, Vec<_>) = missing.into_iter().partition(|(t, _, _)| *t == table);
            missing = rest;
            let keys: Vec<String> = these.into_iter().map(|(_, _, k)| k).collect();
            let what = match keys.as_slice() {
                [one] => format!("missing required key {one}"),
                // Several: the names alone, to keep the line short.
                many => {
                    let names: Vec<&str> = many.iter().map(|k| k.split(" (").next().unwrap_or(k)).collect();
                    format!("missing required keys: {}", names.join(", "))
                }
            };
            let key = if table.is_empty() { "top level".to_string() } else { table };
            errors.push((line, VehicleError::Key { file: self.file.to_path_buf(), key, what, line }));
        }
        errors.sort_by_key(|(line, _)| *line);
        let mut errors: Vec<VehicleError> = errors.into_iter().map(|(_, e)| e).collect();
        match errors.len() {
            0 => {
                let mut warnings = self.warnings.into_inner();
                warnings.sort_by_key(|(line, _)| *line);
                Ok(warnings.into_iter().map(|(_, w)| w).collect())
            }
            1 => Err(errors.remove(0)),
            _ => Err(VehicleError::Several { errors }),
        }
    }
}

/// One TOML table being validated, with its dotted path for messages.
pub(super) struct Section<'a> {
    pub(super) diag: &'a Diagnostics<'a>,
    pub(super) prefix: String,
    pub(super) table: &'a DeTable<'a>,
    /// Byte offset where the table is named (its header), for "missing key" messages.
    pub(super) at: usize,
}

impl<'a> Section<'a> {
    pub(super) fn root(diag: &'a Diagnostics<'a>, table: &'a DeTable<'a>) -> Section<'a> {
        Section { diag, prefix: String::new(), table, at: 0 }
    }

    pub(super) fn key_path(&self, key: &str) -> String {
        if self.prefix.is_empty() {
            clip(key).into_owned()
        } else {
            format!("{}.{}", self.prefix, clip(key))
        }
    }

    /// The offset of `key`'s value (or of the key when it is a table), else of this table.
    fn offset_of(&self, key: &str) -> usize {
        match self.table.get_key_value(key) {
            Some((k, v)) if matches!(v.get_ref(), DeValue::Table(_)) => k.span().start,
            Some((_, v)) => v.span().start,
            None => self.at,
        }
    }

    /// Records an error about `key` (at its line, or the table's when it is missing).
    pub(super) fn error(&self, key: &str, what: impl Into<String>) {
        self.diag.error(self.key_path(key), self.offset_of(key), what.into());
    }

    /// Records an error about the table itself.
    pub(super) fn table_error(&self, what: impl Into<String>) {
        self.diag.error(self.prefix.clone(), self.at, what.into());
    }

    /// Records a warning about `key`.
    pub(super) fn warn(&self, key: &str, what: impl Into<String>) {
        self.diag.warn(&self.key_path(key), self.offset_of(key), what.into());
    }

    /// The number of errors recorded so far (to skip checks that build on values with errors).
    pub(super) fn errors(&self) -> usize {
        self.diag.error_count()
    }

    /// Records every key not in `allowed`; for terrain tables `family` adds a hint when the key
    /// belongs to another model family.
    pub(super) fn check_keys(&self, allowed: &[&str], family: Option<Family>) {
        for (k, _) in self.table.iter() {
            let key: &str = k.get_ref();
            if allowed.contains(&key) {
                continue;
            }
            let offset = k.span().start;
            let what = if let Some(near) = suggestion(key, allowed) {
                format!("unknown key (did you mean {near}?)")
            } else {
                match family.map(|f| (f, owners(key))) {
                    Some((family, owners)) if !owners.is_empty() => {
                        format!("unknown key for model {family} (it belongs to model {})", owners.join(", "))
                    }
                    _ => "unknown key".to_string(),
                }
            };
            self.diag.error(self.key_path(key), offset, what);
        }
    }

    pub(super) fn get(&self, key: &str) -> Option<&'a Spanned<DeValue<'a>>> {
        self.table.get(key)
    }

    pub(super) fn required(&self, key: &str, expected: &str) -> Option<&'a DeValue<'a>> {
        match self.table.get(key) {
            Some(v) => Some(v.get_ref()),
            None => {
                self.missing(key, expected);
                None
            }
        }
    }

    /// Records `key` as missing (listed with the table's other missing keys).
    pub(super) fn missing(&self, key: &str, expected: &str) {
        self.diag.missing(&self.prefix, self.at, format!("{} ({expected})", clip(key)));
    }

    /// The sub-table `key` (an empty one stands in when it is missing or not a table).
    pub(super) fn table(&self, key: &str) -> Option<Section<'a>> {
        let (k, v) = match self.table.get_key_value(key) {
            Some(kv) => kv,
            None => {
                self.missing(key, "a table");
                return None;
            }
        };
        match v.get_ref() {
            DeValue::Table(t) => {
                Some(Section { diag: self.diag, prefix: self.key_path(key), table: t, at: k.span().start })
            }
            other => {
                self.error(key, format!("must be a table, got {}", describe(other)));
                None
            }
        }
    }

    /// The number `key`, or `None` (error recorded) when it is missing or breaks `rule`.
    pub(super) fn number_opt(&self, key: &str, rule: Rule) -> Option<f64> {
        let v = self.required(key, rule.expected())?;
        check_number(v, rule).map_err(|what| self.error(key, what)).ok()
    }

    /// The number `key`; a placeholder when it is missing or breaks `rule` (error recorded).
    pub(super) fn number(&self, key: &str, rule: Rule) -> f64 {
        self.number_opt(key, rule).unwrap_or(rule.placeholder())
    }

    pub(super) fn optional_number(&self, key: &str, rule: Rule) -> Option<f64> {
        let v = self.table.get(key)?;
        check_number(v.get_ref(), rule).map_err(|what| self.error(key, what)).ok()
    }

    /// [`Section::number`] within the plausible range `p` (above `p.max` an error, outside
    /// `p.usual` a warning).
    pub(super) fn plausible_number(&self, key: &str, rule: Rule, p: &Plausible) -> f64 {
        match self.number_opt(key, rule) {
            Some(x) => self.plausible(key, x, p),
            None => rule.placeholder(),
        }
    }

    /// [`Section::optional_number`] within the plausible range `p`.
    pub(super) fn optional_plausible_number(&self, key: &str, rule: Rule, p: &Plausible) -> Option<f64> {
        self.optional_number(key, rule).map(|x| self.plausible(key, x, p))
    }

    /// Checks a value read from `key` against `p`, recording an error or a warning.
    pub(super) fn plausible(&self, key: &str, x: f64, p: &Plausible) -> f64 {
        let hint = if p.hint.is_empty() { String::new() } else { format!(" ({})", p.hint) };
        let unit = if p.unit.is_empty() { String::new() } else { format!(" {}", p.unit) };
        if x.abs() > p.max {
            self.error(
                key,
                format!("{}{unit} is beyond the possible {}{unit}{hint}", show_number(x), show_number(p.max)),
            );
        } else if x < p.usual.0 || x > p.usual.1 {
            let (lo, hi) = (show_number(p.usual.0), show_number(p.usual.1));
            self.warn(key, format!("{}{unit} is unusual, expected {lo} to {hi}{unit}{hint}", show_number(x)));
        }
        x
    }

    /// The string `key`; empty when it is missing or not a string (error recorded).
    pub(super) fn string(&self, key: &str) -> &'a str {
        match self.required(key, "a string") {
            Some(DeValue::String(s)) => s,
            Some(v) => {
                self.error(key, format!("must be a string, got {}", describe(v)));
                ""
            }
            None => "",
        }
    }

    pub(super) fn boolean(&self, key: &str) -> bool {
        match self.required(key, "true or false") {
            Some(DeValue::Boolean(b)) => *b,
            Some(v) => {
                self.error(key, format!("must be true or false, got {}", describe(v)));
                false
            }
            None => false,
        }
    }
}

/// The model families a parameter key belongs to.
fn owners(key: &str) -> Vec<&'static str> {
    Family::ALL
        .into_iter()
        .filter(|f| f.param_names().contains(&key) || (key == "schedule" && *f == Family::ExtendedScheduled))
        .map(Family::name)
        .collect()
}
