-- cuvette schema, version 6: the label of a spectrum within its file (the column header of a
-- several-sample export, or the block title of a JCAMP-DX file), so that the samples of one
-- file are told apart: the file's SHA-256 and the label together name one spectrum.
ALTER TABLE spectrum ADD COLUMN label TEXT;
