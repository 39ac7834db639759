#!/bin/bash
# Partitioning experiment on a fleet kept by hulltally-fleetbench -keep
# (first argument: its fleet-N folder): reading_blocks copied into a
# plain table and into one hash-partitioned by hull (16 partitions); then
# per-hull reads (as verify does) and VACUUM FREEZE timed on both.
#
# The second argument (default 1) copies the fleet's blocks that many
# times, each copy under new hull and dive ids (md5 of the old id and the
# copy's number), to try the tables at a larger fleet than was built:
# 20 copies of the 500 x 100 fleet's blocks are a million dives' worth.
# The per-hull reads then read every 20th hull (as many reads as hulls
# built, across the whole table).
set -e
H=$1
COPIES=${2:-1}
S=$H/postgres; export PGPASSWORD=$(cat $H/database.secret)
P="psql -h $S -p 5432 -U hulltally hulltally -At -q -v ON_ERROR_STOP=1"
$P <<SQL
DROP TABLE IF EXISTS rb_hash, rb_plain;
CREATE TABLE rb_plain (LIKE reading_blocks INCLUDING ALL);
CREATE TABLE rb_hash (LIKE reading_blocks INCLUDING DEFAULTS INCLUDING CONSTRAINTS) PARTITION BY HASH (hull_id);
ALTER TABLE rb_hash ADD PRIMARY KEY (hull_id, dive_id, block_no);
DO \$\$ BEGIN FOR i IN 0..15 LOOP EXECUTE format('CREATE TABLE rb_hash_%s PARTITION OF rb_hash FOR VALUES WITH (MODULUS 16, REMAINDER %s)', i, i); END LOOP; END \$\$;
SQL
cols=$($P -c "SELECT string_agg(CASE attname WHEN 'hull_id' THEN 'CASE WHEN k = 1 THEN hull_id ELSE md5(hull_id::text || k)::uuid END' WHEN 'dive_id' THEN 'CASE WHEN k = 1 THEN dive_id ELSE md5(dive_id::text || k)::uuid END' ELSE quote_ident(attname) END, ', ' ORDER BY attnum) FROM pg_attribute WHERE attrelid = 'reading_blocks'::regclass AND attnum > 0 AND NOT attisdropped")
for t in rb_plain rb_hash; do
  /usr/bin/time -f "$t filled in %e s" $P -c "INSERT INTO $t SELECT $cols FROM generate_series(1, $COPIES) k, reading_blocks"
done
$P -c "VACUUM ANALYZE rb_plain" -c "VACUUM ANALYZE rb_hash"
$P -c "SELECT count(*), count(DISTINCT hull_id), pg_size_pretty(pg_total_relation_size('rb_plain')) FROM rb_plain"
$P -c "SELECT pg_size_pretty(sum(pg_total_relation_size(c.oid))) FROM pg_inherits i JOIN pg_class c ON c.oid = i.inhrelid WHERE i.inhparent = 'rb_hash'::regclass"
# As many hulls as were built, spread over the copies.
$P -c "SELECT CASE WHEN k = 1 THEN id ELSE md5(id::text || k)::uuid END FROM hulls, generate_series(1, $COPIES) k ORDER BY 1" | awk -v c=$COPIES 'NR % c == 0' > /tmp/hullids.txt
for t in rb_plain rb_hash; do
  awk -v t=$t '{print "COPY (SELECT dive_id, block_no, first_sample, samples, t_first_ns, t_last_ns, data, sha256 FROM " t " WHERE hull_id = '"'"'" $1 "'"'"') TO STDOUT (FORMAT binary);"}' /tmp/hullids.txt > /tmp/q_$t.sql
done
for r in 1 2 3; do
  for t in rb_plain rb_hash; do
    /usr/bin/time -f "$t per-hull reads ($(wc -l < /tmp/hullids.txt) hulls): %e s" $P -f /tmp/q_$t.sql > /dev/null
  done
done
for r in 1 2; do
  for t in rb_plain rb_hash; do
    $P -c "\timing on" -c "VACUUM (FREEZE, ANALYZE) $t" | grep Time | sed "s/^/$t vacuum freeze: /"
  done
done
$P -c "DROP TABLE rb_hash, rb_plain"
