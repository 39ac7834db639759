#!/bin/bash
# Partitioning experiment on a fleet kept by hulltally-fleetbench -keep
# (argument: its fleet-N folder): reading_blocks copied into a
# plain table and into one hash-partitioned by hull (16 partitions); then
# per-hull reads (as verify does) and VACUUM FREEZE timed on both.
H=$1
S=$H/postgres; export PGPASSWORD=$(cat $H/database.secret)
P="psql -h $S -p 5432 -U hulltally hulltally -At -q"
$P <<'SQL'
DROP TABLE IF EXISTS rb_hash, rb_plain;
CREATE TABLE rb_plain (LIKE reading_blocks INCLUDING ALL);
CREATE TABLE rb_hash (LIKE reading_blocks INCLUDING DEFAULTS INCLUDING CONSTRAINTS) PARTITION BY HASH (hull_id);
ALTER TABLE rb_hash ADD PRIMARY KEY (hull_id, dive_id, block_no);
DO $$ BEGIN FOR i IN 0..15 LOOP EXECUTE format('CREATE TABLE rb_hash_%s PARTITION OF rb_hash FOR VALUES WITH (MODULUS 16, REMAINDER %s)', i, i); END LOOP; END $$;
INSERT INTO rb_plain SELECT * FROM reading_blocks;
INSERT INTO rb_hash SELECT * FROM reading_blocks;
VACUUM ANALYZE rb_plain; VACUUM ANALYZE rb_hash;
SQL
$P -c "SELECT count(*), pg_size_pretty(pg_total_relation_size('rb_plain')) FROM rb_plain"
$P -c "SELECT pg_size_pretty(sum(pg_total_relation_size(c.oid))) FROM pg_inherits i JOIN pg_class c ON c.oid = i.inhrelid WHERE i.inhparent = 'rb_hash'::regclass"
$P -c "SELECT id FROM hulls" > /tmp/hullids.txt
for t in rb_plain rb_hash; do
  awk -v t=$t '{print "COPY (SELECT dive_id, block_no, first_sample, samples, t_first_ns, t_last_ns, data, sha256 FROM " t " WHERE hull_id = '"'"'" $1 "'"'"') TO STDOUT (FORMAT binary);"}' /tmp/hullids.txt > /tmp/q_$t.sql
done
for r in 1 2 3; do
  for t in rb_plain rb_hash; do
    /usr/bin/time -f "$t per-hull reads: %e s" $P -f /tmp/q_$t.sql > /dev/null
  done
done
for r in 1 2; do
  for t in rb_plain rb_hash; do
    $P -c "\timing on" -c "VACUUM (FREEZE, ANALYZE) $t" | grep Time | sed "s/^/$t vacuum freeze: /"
  done
done
$P -c "DROP TABLE rb_hash, rb_plain"
