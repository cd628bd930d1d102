//! The sealed test split: held until one recorded final evaluation.

use serde::{Deserialize, Serialize};

/// A value (the test split) that no code can read until it is opened.
///
/// The only way in is [`Sealed::open`], which is crate-private, consumes the
/// seal and returns an [`Opening`] record that the caller must write to the run
/// journal. Only the row count is visible while sealed (`Debug` shows only it).
pub struct Sealed<T> {
    inner: T,
    rows: usize,
}

/// The record of one opening of a sealed split.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Opening {
    /// Why it was opened (e.g. "finalize").
    pub purpose: String,
    /// Rows revealed.
    pub rows: usize,
}

impl<T> Sealed<T> {
    /// Seals `inner`, which holds `rows` rows.
    pub fn new(inner: T, rows: usize) -> Self {
        Sealed { inner, rows }
    }

    /// Number of rows behind the seal (counting them reveals nothing else).
    pub fn rows(&self) -> usize {
        self.rows
    }

    /// Breaks the seal. Called only by the final evaluation.
    pub(crate) fn open(self, purpose: &str) -> (T, Opening) {
        let opening = Opening {
            purpose: purpose.to_string(),
            rows: self.rows,
        };
        (self.inner, opening)
    }

    /// Seals `self` and `other` together without opening either, so that one
    /// [`Sealed::open`] reveals both (e.g. the test [`crate::data::Dataset`] with
    /// its [`crate::data::RowTags`]) and gives one [`Opening`] record. Both must
    /// hold the same number of rows.
    pub fn zip<U>(self, other: Sealed<U>) -> crate::Result<Sealed<(T, U)>> {
        if self.rows != other.rows {
            return Err(crate::Error::internal(format!(
                "sealed parts of {} and {} rows cannot be opened together",
                self.rows, other.rows
            )));
        }
        Ok(Sealed {
            inner: (self.inner, other.inner),
            rows: self.rows,
        })
    }

    /// Applies `f` to the sealed value without opening it (e.g. to encode rows).
    pub(crate) fn map<U>(self, f: impl FnOnce(T) -> U) -> Sealed<U> {
        Sealed {
            inner: f(self.inner),
            rows: self.rows,
        }
    }

    /// Like [`Sealed::map`] for a fallible `f`: the error comes out, the value stays sealed.
    pub(crate) fn try_map<U, E>(self, f: impl FnOnce(T) -> Result<U, E>) -> Result<Sealed<U>, E> {
        let rows = self.rows;
        match self.map(f).inner {
            Ok(inner) => Ok(Sealed { inner, rows }),
            Err(error) => Err(error),
        }
    }
}

impl<A, B> Sealed<(A, B)> {
    /// Splits a sealed pair into two seals over the same rows, neither opened.
    pub(crate) fn unzip(self) -> (Sealed<A>, Sealed<B>) {
        let (a, b) = self.inner;
        (Sealed::new(a, self.rows), Sealed::new(b, self.rows))
    }
}

impl<T> std::fmt::Debug for Sealed<T> {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("Sealed")
            .field("rows", &self.rows)
            .finish_non_exhaustive()
    }
}
