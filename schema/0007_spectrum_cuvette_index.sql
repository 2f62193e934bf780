-- cuvette schema, version 7: the covering index over each spectrum's identity gains the
-- spectrum's own cuvette (path and dilution, schema 0005), which a PL spectrum's quantum yield
-- depends on; checking for stale values still reads no spectrum data.
CREATE INDEX spectrum_meta_cuvette ON spectrum(aliquot_id, id, kind, sha256, excitation_nm, x_unit, dilution_factor, path_cm);
