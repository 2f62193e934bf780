-- cuvette schema, version 8: the index over each aliquot's current values also holds their
-- inputs hash and stale flag, so the recompute's and the stale marking's comparison of every
-- current value's hash with what its inputs give now reads the index alone, not each row.
-- superseded_at (always NULL in this partial index) is among its columns because SQLite's
-- planner counts an index as covering only when it holds every column the query names,
-- including those of the index's own WHERE. It replaces the index of version 1, whose
-- columns it begins with.
CREATE INDEX derived_current_hash ON derived_value(aliquot_id, quantity, inputs_hash, stale, superseded_at) WHERE superseded_at IS NULL;
DROP INDEX derived_current;
