//! The lab's closed vocabularies as types: batch and vial statuses, batch relations, location
//! kinds, amount units, vial event kinds, concentration sources, spectrum kinds, and the table
//! of derived quantities the search and recompute read ([`quantity`]).
//!
//! This is the lowest layer: it imports nothing from the project but the error type, and every
//! layer may use it. Each word is the one the lab file, the audit log and the JSON have always
//! carried: `Display`, `FromStr` and serde read and write exactly those strings, so turning a
//! bare string into one of these types changes no byte on disk or in `--json`. The SQLite
//! conversions live in `store::vocab` (only the store speaks SQL); the command line's
//! value parsers in `cli::args`. An unknown word is refused with one line that lists the valid
//! ones ([`UnknownWord`]).

pub mod quantity;

pub use quantity::{DerivedQuantity, SEARCHED_QUANTITIES, Stage};

use std::fmt;

/// A word that is not in its vocabulary: what kind of word, the word, and the valid ones.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct UnknownWord {
    /// What the word was meant to be, as messages name it ("status", "location kind").
    pub what: &'static str,
    pub word: String,
    pub valid: &'static [&'static str],
}

impl fmt::Display for UnknownWord {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(
            f,
            "unknown {} '{}' (use one of {})",
            self.what,
            self.word,
            self.valid.join(", ")
        )
    }
}

impl std::error::Error for UnknownWord {}

impl From<UnknownWord> for crate::error::Error {
    fn from(e: UnknownWord) -> Self {
        crate::error::Error::Invalid(e.to_string())
    }
}

/// What every vocabulary gives: its words in order, and the conversions both ways.
pub trait Vocabulary: Copy + Sized + 'static + fmt::Display + std::str::FromStr<Err = UnknownWord> {
    /// How messages name a word of this vocabulary ("status", "relation").
    const WHAT: &'static str;
    /// Every value, in the order messages and help list them.
    const ALL: &'static [Self];
    /// Every word, in the order of [`Vocabulary::ALL`].
    const WORDS: &'static [&'static str];
    /// The word as it is stored and printed.
    fn as_str(self) -> &'static str;
}

/// Defines one vocabulary: the enum, its words, `Display`, `FromStr`, serde (by the same words)
/// and comparison with a bare word, so code that still holds the word as text compares as before.
macro_rules! vocabulary {
    (
        $(#[$meta:meta])*
        $name:ident, $what:literal {
            $( $(#[$vmeta:meta])* $variant:ident = $word:literal ),+ $(,)?
        }
    ) => {
        $(#[$meta])*
        #[derive(
            Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, serde::Serialize, serde::Deserialize,
        )]
        pub enum $name {
            $( $(#[$vmeta])* #[serde(rename = $word)] $variant ),+
        }

        impl $name {
            /// The word as it is stored and printed.
            pub const fn as_str(self) -> &'static str {
                match self {
                    $( $name::$variant => $word ),+
                }
            }
        }

        impl Vocabulary for $name {
            const WHAT: &'static str = $what;
            const ALL: &'static [Self] = &[$( $name::$variant ),+];
            const WORDS: &'static [&'static str] = &[$( $word ),+];
            fn as_str(self) -> &'static str {
                $name::as_str(self)
            }
        }

        impl fmt::Display for $name {
            fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
                // `pad`, so a width in a table's format (`{:<9}`) lays it out as it did the text.
                f.pad(self.as_str())
            }
        }

        impl std::str::FromStr for $name {
            type Err = UnknownWord;
            fn from_str(s: &str) -> Result<Self, UnknownWord> {
                match s {
                    $( $word => Ok($name::$variant), )+
                    _ => Err(UnknownWord {
                        what: $what,
                        word: s.to_string(),
                        valid: <$name as Vocabulary>::WORDS,
                    }),
                }
            }
        }

        impl PartialEq<str> for $name {
            fn eq(&self, other: &str) -> bool {
                self.as_str() == other
            }
        }

        impl PartialEq<&str> for $name {
            fn eq(&self, other: &&str) -> bool {
                self.as_str() == *other
            }
        }
    };
}

vocabulary! {
    /// Where a batch is in its life.
    BatchStatus, "status" {
        Planned = "planned",
        Growing = "growing",
        Done = "done",
        Failed = "failed",
        Archived = "archived",
    }
}

/// A new batch is planned unless logged otherwise.
impl Default for BatchStatus {
    fn default() -> Self {
        BatchStatus::Planned
    }
}

vocabulary! {
    /// How a batch was made from its parent batch.
    BatchRelation, "relation" {
        /// A shell grown on the parent's cores.
        Shell = "shell",
        /// A size-selected fraction of the parent.
        Fraction = "fraction",
        /// The parent's recipe run again.
        Repeat = "repeat",
    }
}

vocabulary! {
    /// Where a vial is kept.
    LocationKind, "location kind" {
        Freezer = "freezer",
        Fridge = "fridge",
        Glovebox = "glovebox",
        Shelf = "shelf",
        Cabinet = "cabinet",
    }
}

vocabulary! {
    /// A vial's state on the shelf.
    VialStatus, "vial status" {
        /// Holds solution.
        InUse = "in_use",
        /// Drawn to nothing, still on the shelf.
        Empty = "empty",
        /// Thrown away (a reinstatement puts it back).
        Disposed = "disposed",
    }
}

impl VialStatus {
    /// Whether the vial is still on the shelf.
    pub fn on_shelf(self) -> bool {
        self != VialStatus::Disposed
    }
}

vocabulary! {
    /// The unit of a recipe line's amount.
    AmountUnit, "unit" {
        Milligram = "mg",
        Gram = "g",
        Millilitre = "mL",
        Microlitre = "uL",
        Millimole = "mmol",
        Micromole = "umol",
    }
}

vocabulary! {
    /// What happened to a vial, as its history lists it.
    VialEventKind, "vial event" {
        Create = "create",
        Draw = "draw",
        Move = "move",
        Dispose = "dispose",
        Reinstate = "reinstate",
        Measure = "measure",
        Handover = "handover",
    }
}

vocabulary! {
    /// Where a vial concentration came from (schema 0005).
    ConcentrationSource, "concentration source" {
        /// From the vial's own absorbance spectrum.
        Measured = "measured",
        /// From the batch's product aliquot, diluted as the vial was made.
        Estimate = "estimate",
        /// Typed in by a person.
        Entered = "entered",
        /// Carried from a record made before concentrations had provenance.
        Recorded = "recorded",
    }
}

impl ConcentrationSource {
    /// Whether the value follows the spectra and the calibration (a recompute may change it).
    pub fn is_derived(self) -> bool {
        matches!(self, ConcentrationSource::Measured | ConcentrationSource::Estimate)
    }
}

vocabulary! {
    /// The kinds of spectrum the store keeps.
    SpectrumKind, "spectrum kind" {
        Absorbance = "abs",
        /// Photoluminescence.
        Pl = "pl",
        /// Photoluminescence excitation.
        Ple = "ple",
    }
}
