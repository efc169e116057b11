//! Typed access to one key of a need: its value as a number, whole
//! number, boolean, text or choice, each refused with the key's location
//! and what was expected.

use super::loose::{Field, Loose};
use super::{number_range, short_number, shown, Ctx, MAX_TEXT_CHARS};
use crate::error::{Error, Location, Result};

/// One key of the need: its path and, if present, its value.
pub(super) struct Key<'a, W> {
    pub(super) ctx: &'a Ctx<'a>,
    pub(super) path: String,
    pub(super) field: Option<&'a W>,
}

impl<W: Field> Key<'_, W> {
    pub(super) fn value(&self) -> Option<&Loose> {
        self.field.map(Field::value)
    }

    pub(super) fn loc(&self) -> Location {
        self.ctx.at(&self.path, self.field.and_then(Field::span))
    }

    pub(super) fn err(&self, message: impl Into<String>) -> Error {
        Error::input(self.loc(), message)
    }

    pub(super) fn present(&self) -> bool {
        self.field.is_some()
    }

    /// The last part of the path (`bits` of `adc.bits`).
    pub(super) fn name(&self) -> &str {
        self.path.rsplit('.').next().unwrap_or(&self.path)
    }

    /// The table part of the path (`adc` of `adc.bits`).
    pub(super) fn table(&self) -> &str {
        self.path.split('.').next().unwrap_or(&self.path)
    }

    pub(super) fn missing(&self, expected: &str) -> Error {
        self.err(format!(
            "required key `{}` is missing from [{}]; expected {expected}",
            self.name(),
            self.table()
        ))
    }

    /// The allowed range of this key, as a sentence to end a message
    /// ("; allowed: volts from -1000 to 1000"), from [`NUMBER_RANGES`](super::ranges::NUMBER_RANGES).
    pub(super) fn allowed(&self) -> String {
        number_range(&self.path).map_or(String::new(), |r| format!("; allowed: {}", r.describe()))
    }

    /// A finite number, if present (its range is checked by
    /// [`Key::ranged`], after the key's own checks).
    pub(super) fn number(&self, unit: &str) -> Result<Option<f64>> {
        match self.value() {
            None => Ok(None),
            Some(Loose::Int(i)) => Ok(Some(*i as f64)),
            Some(Loose::Float(x)) if x.is_finite() => Ok(Some(*x)),
            Some(v @ Loose::Float(_)) => Err(self.err(format!(
                "expected a finite number ({unit}), found {}{}",
                v.describe(),
                self.allowed()
            ))),
            Some(v) => Err(self.err(format!(
                "expected a number ({unit}), found {}{}",
                v.describe(),
                self.allowed()
            ))),
        }
    }

    /// `value` if it lies inside the key's range of [`NUMBER_RANGES`](super::ranges::NUMBER_RANGES); an
    /// error naming the range otherwise.
    pub(super) fn ranged(&self, value: f64) -> Result<f64> {
        match number_range(&self.path) {
            Some(r) if !(r.min..=r.max).contains(&value) => Err(self.err(format!(
                "expected a number ({}), found {}",
                r.describe(),
                short_number(value)
            ))),
            _ => Ok(value),
        }
    }

    pub(super) fn required_number(&self, unit: &str) -> Result<f64> {
        self.number(unit)?
            .ok_or_else(|| self.missing(&format!("a number ({unit}){}", self.allowed())))
    }

    /// A whole number, if present (a float with no fraction counts);
    /// `expected` says what was wanted, range included.
    pub(super) fn integer(&self, expected: &str) -> Result<Option<i128>> {
        match self.value() {
            None => Ok(None),
            Some(Loose::Int(i)) => Ok(Some(*i)),
            Some(Loose::Float(x)) if x.is_finite() && x.fract() == 0.0 && x.abs() < 1e18 => {
                Ok(Some(*x as i128))
            }
            Some(v) => Err(self.err(format!("expected {expected}, found {}", v.describe()))),
        }
    }

    /// A whole number inside the key's range of [`NUMBER_RANGES`](super::ranges::NUMBER_RANGES), or the
    /// default.
    pub(super) fn integer_in(&self, what: &str, default: Option<i128>) -> Result<i128> {
        let (min, max) = number_range(&self.path)
            .map_or((i128::MIN, i128::MAX), |r| (r.min as i128, r.max as i128));
        let expected = format!("a whole number ({what}) from {min} to {max}");
        let value = match (self.integer(&expected)?, default) {
            (Some(v), _) => v,
            (None, Some(d)) => d,
            (None, None) => return Err(self.missing(&expected)),
        };
        if (min..=max).contains(&value) {
            Ok(value)
        } else {
            Err(self.err(format!("expected {expected}, found {value}")))
        }
    }

    pub(super) fn boolean(&self, default: bool) -> Result<bool> {
        match self.value() {
            None => Ok(default),
            Some(Loose::Bool(b)) => Ok(*b),
            Some(v) => Err(self.err(format!("expected true or false, found {}", v.describe()))),
        }
    }

    /// Text of at most [`MAX_TEXT_CHARS`] characters with no control
    /// characters, if present.
    pub(super) fn text(&self) -> Result<Option<String>> {
        match self.value() {
            None => Ok(None),
            Some(Loose::Text(s)) => {
                let count = s.chars().count();
                if count > MAX_TEXT_CHARS {
                    return Err(self.err(format!(
                        "text is {count} characters long; the limit is {MAX_TEXT_CHARS}"
                    )));
                }
                if let Some(c) = s.chars().find(|c| c.is_control()) {
                    return Err(self.err(format!(
                        "text contains the control character {}; expected plain text on one line",
                        c.escape_unicode()
                    )));
                }
                Ok(Some(s.clone()))
            }
            Some(v) => Err(self.err(format!("expected text in quotes, found {}", v.describe()))),
        }
    }

    /// One of a fixed set of names, or the default.
    pub(super) fn choice<T: Copy>(&self, choices: &[(&str, T)], default: T) -> Result<T> {
        let names = || {
            choices
                .iter()
                .map(|(n, _)| format!("\"{n}\""))
                .collect::<Vec<_>>()
                .join(", ")
        };
        match self.value() {
            None => Ok(default),
            Some(Loose::Text(s)) => choices
                .iter()
                .find(|(n, _)| n == s)
                .map(|&(_, t)| t)
                .ok_or_else(|| {
                    self.err(format!("expected one of {}, found `{}`", names(), shown(s)))
                }),
            Some(v) => Err(self.err(format!(
                "expected one of {}, found {}",
                names(),
                v.describe()
            ))),
        }
    }

    /// A non-empty list of names from `choices` (a single name counts as a
    /// list of one), duplicates dropped, or the default.
    pub(super) fn choice_list<T: Copy + PartialEq>(
        &self,
        choices: &[(&str, T)],
        default: &[T],
    ) -> Result<Vec<T>> {
        let names = || {
            choices
                .iter()
                .map(|(n, _)| format!("\"{n}\""))
                .collect::<Vec<_>>()
                .join(", ")
        };
        let items: Vec<&Loose> = match self.value() {
            None => return Ok(default.to_vec()),
            Some(Loose::List(items)) => items.iter().collect(),
            Some(v @ Loose::Text(_)) => vec![v],
            Some(v) => {
                return Err(self.err(format!(
                    "expected a list of names from {}, found {}",
                    names(),
                    v.describe()
                )))
            }
        };
        if items.is_empty() {
            return Err(self.err(format!(
                "the list is empty; expected at least one of {}",
                names()
            )));
        }
        let mut out: Vec<T> = Vec::new();
        for (i, item) in items.into_iter().enumerate() {
            let found = match item {
                Loose::Text(s) => choices.iter().find(|(n, _)| n == s).map(|&(_, t)| t),
                _ => None,
            };
            let t = found.ok_or_else(|| {
                self.err(format!(
                    "item {} of the list: expected one of {}, found {}",
                    i + 1,
                    names(),
                    match item {
                        Loose::Text(s) => format!("`{}`", shown(s)),
                        other => other.describe(),
                    }
                ))
            })?;
            if !out.contains(&t) {
                out.push(t);
            }
        }
        Ok(out)
    }
}

/// Checks on a number that has been read.
/// The key's own rule comes first, then its range of [`NUMBER_RANGES`](super::ranges::NUMBER_RANGES).
pub(super) fn check(
    key: &Key<'_, impl Field>,
    value: f64,
    ok: bool,
    expected: &str,
) -> Result<f64> {
    if ok {
        key.ranged(value)
    } else {
        Err(key.err(format!(
            "expected {expected}, found {}{}",
            short_number(value),
            key.allowed()
        )))
    }
}
