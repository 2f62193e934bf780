-- cuvette schema, version 5: corrections without deletion, vial concentrations with their
-- provenance, a hash of every stored spectrum's data, and the file's application id.

-- A voided aliquot or batch stays in the record, marked, and is left out of growth series,
-- product values, search, plots and the handover pack.
ALTER TABLE aliquot ADD COLUMN voided_at TEXT;
ALTER TABLE aliquot ADD COLUMN void_why TEXT;
ALTER TABLE batch ADD COLUMN voided_at TEXT;
ALTER TABLE batch ADD COLUMN void_why TEXT;

-- SHA-256 of the stored data (the file's own hash is `sha256`); `check` compares them.
ALTER TABLE spectrum ADD COLUMN data_sha256 TEXT;
-- For a vial's own measurement: how its cuvette was filled.
ALTER TABLE spectrum ADD COLUMN dilution_factor REAL;
ALTER TABLE spectrum ADD COLUMN path_cm REAL;

-- The product rule, defined once: a batch's product is its marked aliquot unless voided, else
-- the last timed aliquot of its growth series, else the last logged; voided ones never count.
CREATE VIEW batch_product AS
SELECT b.id AS batch_id,
       COALESCE(
         (SELECT a.id FROM aliquot a WHERE a.id = b.product_aliquot_id AND a.voided_at IS NULL),
         (SELECT a.id FROM aliquot a WHERE a.batch_id = b.id AND a.voided_at IS NULL
            ORDER BY a.minutes IS NULL, a.minutes DESC, a.id DESC LIMIT 1)
       ) AS aliquot_id
FROM batch b
WHERE b.voided_at IS NULL;

-- A vial's concentration is a derived value like any other: where it came from, under which
-- calibration, and whether its inputs have moved since. The current row has superseded_at NULL.
--   measured: from the vial's own absorbance spectrum (spectrum_id, with its dilution and path)
--   estimate: carried over from the product aliquot of the reaction (aliquot_id); the vial holds
--             washed, redispersed product, so this is an estimate and is always shown as one
--   entered:  a figure the user gave
--   recorded: a value from before cuvette kept provenance; source unknown
CREATE TABLE vial_concentration (
    id                  INTEGER PRIMARY KEY,
    vial_id             INTEGER NOT NULL REFERENCES vial(id),
    source              TEXT NOT NULL CHECK (source IN ('measured','estimate','entered','recorded')),
    spectrum_id         INTEGER REFERENCES spectrum(id),
    aliquot_id          INTEGER REFERENCES aliquot(id),
    value               REAL,
    method              TEXT NOT NULL,
    calibration_version INTEGER REFERENCES calibration(version),
    inputs_hash         TEXT NOT NULL,
    warnings            TEXT NOT NULL DEFAULT '[]',
    computed_at         TEXT NOT NULL,
    superseded_at       TEXT,
    stale               INTEGER NOT NULL DEFAULT 0
);
CREATE INDEX vial_concentration_current ON vial_concentration(vial_id) WHERE superseded_at IS NULL;
INSERT INTO vial_concentration (vial_id, source, value, method, inputs_hash, computed_at)
SELECT id, 'recorded', concentration_molar, 'recorded before cuvette kept the source of vial concentrations', '', created_at
FROM vial WHERE concentration_molar IS NOT NULL;

-- Vial events gain 'reinstate' (a disposal undone) and 'measure'; SQLite cannot alter a CHECK,
-- so the table is rebuilt with its rows.
CREATE TABLE vial_event_v5 (
    id          INTEGER PRIMARY KEY,
    vial_id     INTEGER NOT NULL REFERENCES vial(id),
    kind        TEXT NOT NULL CHECK (kind IN ('create','draw','move','dispose','handover','reinstate','measure')),
    amount_ml   REAL,
    from_location_id INTEGER REFERENCES location(id),
    to_location_id   INTEGER REFERENCES location(id),
    who         TEXT NOT NULL,
    why         TEXT,
    at          TEXT NOT NULL
);
INSERT INTO vial_event_v5 SELECT id, vial_id, kind, amount_ml, from_location_id, to_location_id, who, why, at FROM vial_event;
DROP TABLE vial_event;
ALTER TABLE vial_event_v5 RENAME TO vial_event;
CREATE INDEX vial_event_vial ON vial_event(vial_id);

PRAGMA application_id = 1129666132;
