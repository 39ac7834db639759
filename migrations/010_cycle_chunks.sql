-- Counted cycles in parts.
--
-- A long record (tens of millions of samples with noisy gauges) counts
-- millions of cycles. Holding them all until the dive is stored made the
-- memory of `dive log` grow with the file, and one array per series has a
-- hard size limit in PostgreSQL. A series is now stored as one or more
-- rows numbered by `chunk` from 0: the series is the rows' arrays joined in
-- chunk order. Rows stored before this migration are chunk 0, each the
-- whole series. The canonical bytes chained for a dive's cycles are those
-- of the joined series, so the chain does not change. verify refuses a
-- series whose chunks are not numbered 0, 1, 2, ... without a gap, or whose
-- chunks disagree on unit or gate.

ALTER TABLE dive_cycles ADD COLUMN chunk integer NOT NULL DEFAULT 0 CHECK (chunk >= 0);
ALTER TABLE dive_cycles DROP CONSTRAINT dive_cycles_pkey, ADD PRIMARY KEY (hull_id, dive_id, series, chunk);
