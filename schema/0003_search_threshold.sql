-- cuvette schema, version 3: the numeric bounds people search by, so that a recompute preview
-- can name the batches whose values cross one of them.
CREATE TABLE search_threshold (
    field      TEXT NOT NULL,
    value      REAL NOT NULL,
    last_used  TEXT NOT NULL,
    uses       INTEGER NOT NULL DEFAULT 1,
    PRIMARY KEY (field, value)
);
