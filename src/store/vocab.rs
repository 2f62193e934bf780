//! The SQLite conversions of the lab's vocabularies (`crate::vocab`): each is stored as its
//! word, the same TEXT the schema's CHECK constraints list, so a typed column reads and writes
//! exactly the bytes a bare string did. A word outside the vocabulary read from a file (one a
//! newer cuvette wrote, or a damaged one) is a conversion error naming the word and the valid
//! ones, never a panic.

use crate::vocab::{
    AmountUnit, BatchRelation, BatchStatus, ConcentrationSource, LocationKind, SpectrumKind, VialEventKind, VialStatus,
};
use rusqlite::types::{FromSql, FromSqlError, FromSqlResult, ToSql, ToSqlOutput, ValueRef};

macro_rules! sql_word {
    ($($t:ty),+ $(,)?) => {$(
        impl ToSql for $t {
            fn to_sql(&self) -> rusqlite::Result<ToSqlOutput<'_>> {
                Ok(ToSqlOutput::from(self.as_str()))
            }
        }

        impl FromSql for $t {
            fn column_result(value: ValueRef<'_>) -> FromSqlResult<Self> {
                value
                    .as_str()?
                    .parse::<$t>()
                    .map_err(|e| FromSqlError::Other(Box::new(e)))
            }
        }
    )+};
}

sql_word!(
    BatchStatus,
    BatchRelation,
    LocationKind,
    VialStatus,
    AmountUnit,
    VialEventKind,
    ConcentrationSource,
    SpectrumKind,
);
