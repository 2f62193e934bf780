-- cuvette schema, version 2: facts about the lab file itself (is it a demo lab, who made it),
-- and an index that makes "has this exact file been imported before" cheap.

CREATE TABLE lab_meta (
    key   TEXT PRIMARY KEY,
    value TEXT NOT NULL
);
CREATE INDEX spectrum_sha ON spectrum(sha256);

-- The materials the shipped methods know. A lab adds its own with `cuvette material add`.
INSERT OR IGNORE INTO material (name, core, shell, notes) VALUES
    ('CdSe', 'CdSe', NULL, 'zinc-blende or wurtzite cores'),
    ('CdTe', 'CdTe', NULL, NULL),
    ('CdS', 'CdS', NULL, NULL),
    ('PbS', 'PbS', NULL, NULL),
    ('PbSe', 'PbSe', NULL, NULL),
    ('InP', 'InP', NULL, 'tetrahedral crystals; sized by edge length'),
    ('CdSe/ZnS', 'CdSe', 'ZnS', 'core/shell; the core curve sizes the core only'),
    ('CdSe/CdS', 'CdSe', 'CdS', 'core/shell; the core curve sizes the core only'),
    ('InP/ZnSe', 'InP', 'ZnSe', 'core/shell; the core curve sizes the core only'),
    ('InP/ZnS', 'InP', 'ZnS', 'core/shell; the core curve sizes the core only');
