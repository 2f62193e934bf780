//! The field words of the query language and what each reads: `FIELD_NAMES` (the words,
//! their synonyms included) and, per `Field`, whether it is numeric, its stored units, the unit
//! words it accepts and how it is written back. A new search field starts here.

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Field {
    Size,
    Peak,
    Pl,
    Qy,
    Fwhm,
    Dispersion,
    Conc,
    Material,
    By,
    Status,
    At,
    Date,
    Recipe,
    Id,
}

pub const FIELD_NAMES: &[(&str, Field)] = &[
    ("size", Field::Size),
    ("peak", Field::Peak),
    ("pl", Field::Pl),
    ("qy", Field::Qy),
    ("fwhm", Field::Fwhm),
    ("dispersion", Field::Dispersion),
    ("conc", Field::Conc),
    ("material", Field::Material),
    ("by", Field::By),
    ("status", Field::Status),
    ("at", Field::At),
    ("date", Field::Date),
    ("recipe", Field::Recipe),
    ("id", Field::Id),
];

impl Field {
    pub fn name(self) -> &'static str {
        FIELD_NAMES
            .iter()
            .find(|(_, f)| *f == self)
            .map(|(n, _)| *n)
            .unwrap_or("?")
    }

    /// The field a word names, without regard to case.
    pub fn named(word: &str) -> Option<Field> {
        FIELD_NAMES
            .iter()
            .find(|(n, _)| n.eq_ignore_ascii_case(word))
            .map(|(_, f)| *f)
    }

    pub(crate) fn numeric(self) -> bool {
        matches!(
            self,
            Field::Size
                | Field::Peak
                | Field::Pl
                | Field::Qy
                | Field::Fwhm
                | Field::Dispersion
                | Field::Conc
                | Field::Id
        )
    }

    /// A condition of this field as people write it, for the hints in errors.
    pub(super) fn example(self) -> &'static str {
        match self {
            Field::Size => "size 3.5 to 4",
            Field::Peak => "peak > 520 nm",
            Field::Pl => "pl 610-630",
            Field::Qy => "qy >= 50%",
            Field::Fwhm => "fwhm < 30",
            Field::Dispersion => "dispersion < 8 %",
            Field::Conc => "conc > 2 uM",
            Field::Id => "id 12",
            Field::Date => "date 2026-06-01 to 2026-06-30",
            Field::Material => "material CdSe",
            Field::By => "by \"Wren Halloway\"",
            Field::Status => "status done",
            Field::At => "at freezer",
            Field::Recipe => "recipe \"ZnS shell\"",
        }
    }

    /// The units a number of this field may carry, for the hints in errors.
    pub(super) fn units(self) -> &'static str {
        crate::vocab::quantity::searched_by(self.name()).map_or("no unit", |q| q.search_units)
    }
}
