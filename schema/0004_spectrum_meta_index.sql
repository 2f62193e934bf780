-- cuvette schema, version 4: a covering index over each spectrum's identity, so that checking
-- whether derived values are stale reads no spectrum data (the BLOB sits before the hash in
-- the row, and would otherwise be walked to reach it).
CREATE INDEX spectrum_meta ON spectrum(aliquot_id, id, kind, sha256, excitation_nm, x_unit);
