//! The terminal UI (being built).
use crate::error::Result;
use crate::store::Store;

pub fn run(_store: &mut Store) -> Result<()> {
    Err(crate::error::Error::Invalid("the terminal UI is not built yet".into()))
}
