-- cuvette schema, version 1. Append-only: never edit this file once it has landed;
-- add a new numbered file instead (see DEVELOPERS.md).

CREATE TABLE person (
    id          INTEGER PRIMARY KEY,
    name        TEXT NOT NULL UNIQUE,
    email       TEXT,
    active      INTEGER NOT NULL DEFAULT 1
);

CREATE TABLE material (
    id          INTEGER PRIMARY KEY,
    name        TEXT NOT NULL UNIQUE,      -- e.g. CdSe, CdSe/ZnS, PbS
    core        TEXT NOT NULL,             -- the material whose sizing curve applies
    shell       TEXT,
    notes       TEXT
);

CREATE TABLE reagent (
    id          INTEGER PRIMARY KEY,
    name        TEXT NOT NULL UNIQUE,
    formula     TEXT,
    cas         TEXT,
    ghs_hazards TEXT NOT NULL DEFAULT '',  -- space-separated H-statement codes
    pyrophoric  INTEGER NOT NULL DEFAULT 0
);

CREATE TABLE recipe (
    id          INTEGER PRIMARY KEY,
    name        TEXT NOT NULL UNIQUE,
    material_id INTEGER NOT NULL REFERENCES material(id)
);

CREATE TABLE recipe_version (
    id          INTEGER PRIMARY KEY,
    recipe_id   INTEGER NOT NULL REFERENCES recipe(id),
    version     INTEGER NOT NULL,
    created_at  TEXT NOT NULL,
    created_by  INTEGER REFERENCES person(id),
    notes       TEXT,
    UNIQUE (recipe_id, version)
);

CREATE TABLE recipe_reagent (
    id                INTEGER PRIMARY KEY,
    recipe_version_id INTEGER NOT NULL REFERENCES recipe_version(id),
    reagent_id        INTEGER NOT NULL REFERENCES reagent(id),
    amount            REAL NOT NULL CHECK (amount >= 0),
    unit              TEXT NOT NULL CHECK (unit IN ('mg','g','mL','uL','mmol','umol')),
    role              TEXT                  -- precursor, ligand, solvent
);

CREATE TABLE recipe_step (
    id                INTEGER PRIMARY KEY,
    recipe_version_id INTEGER NOT NULL REFERENCES recipe_version(id),
    position          INTEGER NOT NULL,
    action            TEXT NOT NULL,
    temperature_c     REAL,
    duration_min      REAL CHECK (duration_min IS NULL OR duration_min >= 0)
);

-- Calibration sets are versioned as a whole: every change writes a new row, old rows stay.
CREATE TABLE calibration (
    version     INTEGER PRIMARY KEY,
    body        TEXT NOT NULL,             -- JSON, see derive::calibration
    created_at  TEXT NOT NULL,
    created_by  TEXT NOT NULL,
    why         TEXT NOT NULL
);

CREATE TABLE batch (
    id                  INTEGER PRIMARY KEY,
    name                TEXT NOT NULL,
    material_id         INTEGER NOT NULL REFERENCES material(id),
    recipe_version_id   INTEGER REFERENCES recipe_version(id),
    operator_id         INTEGER REFERENCES person(id),
    started_at          TEXT NOT NULL,
    status              TEXT NOT NULL CHECK (status IN ('planned','growing','done','failed','archived')),
    parent_batch_id     INTEGER REFERENCES batch(id),
    parent_relation     TEXT CHECK (parent_relation IS NULL OR parent_relation IN ('shell','fraction','repeat')),
    pinned_calibration  INTEGER REFERENCES calibration(version),
    product_aliquot_id  INTEGER,
    notes               TEXT NOT NULL DEFAULT ''
);
CREATE INDEX batch_material ON batch(material_id);
CREATE INDEX batch_operator ON batch(operator_id);

CREATE TABLE aliquot (
    id              INTEGER PRIMARY KEY,
    batch_id        INTEGER NOT NULL REFERENCES batch(id),
    minutes         REAL CHECK (minutes IS NULL OR minutes >= 0),
    stage           TEXT,                   -- "crude", "washed", ... when not a timed aliquot
    dilution_factor REAL NOT NULL DEFAULT 1 CHECK (dilution_factor > 0),
    path_cm         REAL NOT NULL DEFAULT 1 CHECK (path_cm > 0),
    solvent         TEXT NOT NULL DEFAULT 'hexane',
    taken_at        TEXT NOT NULL,
    CHECK (minutes IS NOT NULL OR stage IS NOT NULL)
);
CREATE INDEX aliquot_batch ON aliquot(batch_id);

CREATE TABLE location (
    id          INTEGER PRIMARY KEY,
    name        TEXT NOT NULL UNIQUE,
    kind        TEXT NOT NULL CHECK (kind IN ('freezer','fridge','glovebox','shelf','cabinet')),
    position    TEXT
);

CREATE TABLE vial (
    id            INTEGER PRIMARY KEY,
    batch_id      INTEGER NOT NULL REFERENCES batch(id),
    label         TEXT NOT NULL UNIQUE,
    volume_ml     REAL NOT NULL CHECK (volume_ml >= 0),
    initial_ml    REAL NOT NULL CHECK (initial_ml >= 0),
    solvent       TEXT NOT NULL,
    location_id   INTEGER NOT NULL REFERENCES location(id),
    position      TEXT,
    owner_id      INTEGER REFERENCES person(id),
    status        TEXT NOT NULL CHECK (status IN ('in_use','empty','disposed')),
    concentration_molar REAL,               -- of the vial's solution, when measured or derived
    created_at    TEXT NOT NULL
);
CREATE INDEX vial_batch ON vial(batch_id);

CREATE TABLE vial_event (
    id          INTEGER PRIMARY KEY,
    vial_id     INTEGER NOT NULL REFERENCES vial(id),
    kind        TEXT NOT NULL CHECK (kind IN ('create','draw','move','dispose','handover')),
    amount_ml   REAL,
    from_location_id INTEGER REFERENCES location(id),
    to_location_id   INTEGER REFERENCES location(id),
    who         TEXT NOT NULL,
    why         TEXT,
    at          TEXT NOT NULL
);
CREATE INDEX vial_event_vial ON vial_event(vial_id);

CREATE TABLE spectrum (
    id              INTEGER PRIMARY KEY,
    aliquot_id      INTEGER REFERENCES aliquot(id),
    vial_id         INTEGER REFERENCES vial(id),
    kind            TEXT NOT NULL CHECK (kind IN ('abs','pl','ple')),
    x_unit          TEXT NOT NULL,          -- as the file stated it: nm, eV, 1/cm
    y_unit          TEXT,
    npoints         INTEGER NOT NULL,
    data            BLOB NOT NULL,          -- little-endian f64 pairs (x, y), in file order
    file_name       TEXT NOT NULL,
    sha256          TEXT NOT NULL,
    excitation_nm   REAL,
    instrument      TEXT,                   -- JSON of instrument settings for PL
    created_at      TEXT NOT NULL,
    CHECK ((aliquot_id IS NULL) <> (vial_id IS NULL))
);
CREATE INDEX spectrum_aliquot ON spectrum(aliquot_id);

-- One row per derived quantity. The current value has superseded_at NULL; recompute keeps the
-- old row and stamps it, so the history of every number is kept.
CREATE TABLE derived_value (
    id                  INTEGER PRIMARY KEY,
    aliquot_id          INTEGER NOT NULL REFERENCES aliquot(id),
    quantity            TEXT NOT NULL,
    value               REAL,
    unit                TEXT NOT NULL,
    method              TEXT NOT NULL,
    calibration_version INTEGER NOT NULL REFERENCES calibration(version),
    inputs_hash         TEXT NOT NULL,
    warnings            TEXT NOT NULL DEFAULT '[]',
    computed_at         TEXT NOT NULL,
    superseded_at       TEXT,
    stale               INTEGER NOT NULL DEFAULT 0
);
CREATE INDEX derived_current ON derived_value(aliquot_id, quantity) WHERE superseded_at IS NULL;

CREATE TABLE audit_log (
    id          INTEGER PRIMARY KEY AUTOINCREMENT,
    at          TEXT NOT NULL,
    who         TEXT NOT NULL,
    entity      TEXT NOT NULL,
    entity_id   INTEGER,
    action      TEXT NOT NULL,
    before      TEXT,
    after       TEXT
);
CREATE TRIGGER audit_no_update BEFORE UPDATE ON audit_log
BEGIN SELECT RAISE(ABORT, 'the audit log is append-only'); END;
CREATE TRIGGER audit_no_delete BEFORE DELETE ON audit_log
BEGIN SELECT RAISE(ABORT, 'the audit log is append-only'); END;
