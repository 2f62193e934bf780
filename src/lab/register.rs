//! The lab's registers: people, materials, reagents (with their GHS hazard statements),
//! storage locations and recipes. Each addition is one audited transaction.

use crate::error::Result;
use crate::store::{Store, model};
use crate::vocab::LocationKind;

/// Adds a person to the lab; returns the new id.
pub fn add_person(store: &mut Store, name: &str, email: Option<&str>) -> Result<i64> {
    store.write(|tx, who| model::add_person(tx, who, name, email))
}

/// Adds a material (its core decides the sizing curves that apply); returns the new id.
pub fn add_material(store: &mut Store, name: &str, core: &str, shell: Option<&str>) -> Result<i64> {
    store.write(|tx, who| model::add_material(tx, who, name, core, shell))
}

/// Adds a reagent with its GHS hazard statements (codes as given in any case, kept upper
/// case, as the GHS writes them); returns the new id.
pub fn add_reagent(
    store: &mut Store,
    name: &str,
    formula: Option<&str>,
    cas: Option<&str>,
    hazards: &[String],
    pyrophoric: bool,
) -> Result<i64> {
    let codes: Vec<String> = hazards.iter().map(|h| h.to_ascii_uppercase()).collect();
    store.write(|tx, who| model::add_reagent(tx, who, name, formula, cas, &codes, pyrophoric))
}

/// Adds a storage location; returns the new id.
pub fn add_location(store: &mut Store, name: &str, kind: LocationKind, position: Option<&str>) -> Result<i64> {
    store.write(|tx, who| model::add_location(tx, who, name, kind, position))
}

/// The first run's introductions: the person using cuvette and the first storage place, either
/// or both, in one transaction.
pub fn first_run(
    store: &mut Store,
    person: Option<(&str, Option<&str>)>,
    place: Option<(&str, LocationKind)>,
) -> Result<()> {
    store.write(|tx, who| {
        if let Some((name, email)) = person {
            model::add_person(tx, who, name, email)?;
        }
        if let Some((place, kind)) = place {
            model::add_location(tx, who, place, kind, None)?;
        }
        Ok(())
    })
}

/// Saves a recipe (a new one, or the next version of one of that name); returns it as stored.
pub fn save_recipe(
    store: &mut Store,
    name: &str,
    material: &str,
    reagents: &[model::RecipeReagent],
    steps: &[model::RecipeStep],
    notes: Option<&str>,
) -> Result<model::RecipeView> {
    store.write(|tx, who| {
        let (_, version_id) = model::save_recipe(tx, who, name, material, reagents, steps, notes)?;
        model::recipe_view(tx, version_id)
    })
}
