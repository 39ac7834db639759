package ledger

import (
	"context"
	"encoding/binary"
	"errors"
	"fmt"
	"slices"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"

	"hulltally/fatigue/stream"
	"hulltally/ledger/profilepack"
)

// A dive's profile is stored in one of two forms (dive_profiles):
//
//   - packed (migration 020, what hulltally writes): every value in one
//     bytea, series, byte-shuffled and LZ4-compressed by hulltally
//     (ledger/profilepack), stored as it is (STORAGE EXTERNAL);
//   - as sent (migration 019, profiles written before 020): the times,
//     pressures and strain as three bytea in the binary form PostgreSQL
//     sends a float8[] in; hulltally db migrate packs them.
//
// A row holds exactly one form (a CHECK constraint, and every reader).
// Both read to the same values and so to the same canonical bytes: the
// chain hashed the values, not the form.

// profileCanon is the profile's canonical bytes.
func profileCanon(dive uuid.UUID, p *profileAcc) []byte {
	c := profileCanonHead(nil, dive, p.step, len(p.TimeS))
	c.growF64(len(p.TimeS) * (2 + len(p.Strain)))
	for i := range p.TimeS {
		c.f64(p.TimeS[i])
		c.f64(p.Press[i])
	}
	c.strs(p.gauges)
	for _, g := range p.Strain {
		for _, v := range g {
			c.f64(v)
		}
	}
	return c.b
}

// profileCanonHead starts a profile's canonical bytes on dst: the kind,
// the dive, the step and the number of points.
func profileCanonHead(dst []byte, dive uuid.UUID, step float64, n int) *canon {
	c := &canon{b: dst}
	c.str("dive_profile")
	c.uuid(dive)
	c.f64(step)
	c.i64(int64(n))
	return c
}

// storedProfile is a stored profile's series as read, in either form
// (nil where the column is NULL); the bytes may be a row's raw bytes,
// valid until the next row.
type storedProfile struct {
	gauges            []string
	ts, press, strain []byte // as sent (migration 019)
	series            []byte // packed (migration 020)
}

// profileReader reads stored profiles, reusing its scratch from one to
// the next (not safe for concurrent use).
type profileReader struct {
	vals, planes []byte
}

// values returns a stored profile's values, eight big-endian bytes each
// (the bytes the canonical form holds): its n times, n pressures, then
// the strain gauge by gauge. A form hulltally never stores, both forms or
// neither in one row, or series that do not pair up with each other or
// with the gauges, is a finding (why; the record was changed). The
// values lie in r's scratch, valid until its next read.
func (r *profileReader) values(s storedProfile) (vals []byte, n int, why string) {
	if s.series == nil {
		if s.ts == nil && s.press == nil && s.strain == nil {
			return nil, 0, "profile has no series, in either form (the stored record was changed)"
		}
		tb, pb, sb, why := profileSent(s.gauges, s.ts, s.press, s.strain)
		if why != "" {
			return nil, 0, why
		}
		r.vals = r.vals[:0]
		for _, b := range [][]byte{tb, pb, sb} {
			for i := 0; i < len(b)/12; i++ {
				r.vals = append(r.vals, b[12*i+4:12*i+12]...)
			}
		}
		return r.vals, len(tb) / 12, ""
	}
	if s.ts != nil || s.press != nil || s.strain != nil {
		return nil, 0, "profile is stored both packed and as sent (the stored record was changed)"
	}
	// The counts first, from the header alone: a changed header cannot
	// make the reader allocate more than the profile hulltally keeps for
	// the row's gauges (and Unpack bounds it by the stored bytes too).
	n, m, err := profilepack.Header(s.series)
	if err != nil {
		return nil, 0, fmt.Sprintf("profile: %v (the stored record was changed)", err)
	}
	if n > stream.MaxProfilePoints {
		return nil, 0, fmt.Sprintf("profile has %d points, more than the %d hulltally keeps (the stored record was changed)", n, stream.MaxProfilePoints)
	}
	if m != n*len(s.gauges) {
		return nil, 0, fmt.Sprintf("profile strain has %d values for %d gauges × %d points", m, len(s.gauges), n)
	}
	u, vals, planes, err := profilepack.Unpack(s.series, r.vals, r.planes)
	r.vals, r.planes = vals, planes
	if err != nil {
		return nil, 0, fmt.Sprintf("profile: %v (the stored record was changed)", err)
	}
	return u.Values, u.N, ""
}

// profileSent checks a stored profile's series as sent (migration 019)
// for the profile's gauges and returns their elements (float8Checked), or
// a finding: a form hulltally never stores, or series that do not pair
// up (the record was changed).
func profileSent(gauges []string, ts, press, strain []byte) (tb, pb, sb []byte, why string) {
	tb, err := float8Checked(ts)
	if err == nil {
		if pb, err = float8Checked(press); err == nil {
			sb, err = float8Checked(strain)
		}
	}
	if err != nil {
		return nil, nil, nil, fmt.Sprintf("profile: %v (the stored record was changed)", err)
	}
	n := len(tb) / 12
	if m := len(pb) / 12; m != n {
		return nil, nil, nil, fmt.Sprintf("profile has %d times and %d pressures (the stored record was changed)", n, m)
	}
	if m := len(sb) / 12; m != n*len(gauges) {
		return nil, nil, nil, fmt.Sprintf("profile strain has %d values for %d gauges × %d points", m, len(gauges), n)
	}
	return tb, pb, sb, ""
}

// appendProfileCanonStored appends the canonical bytes of a stored
// profile to dst straight from its stored values (profileReader.values),
// without decoding them: the same bytes as profileCanon of the profile
// fromStored reads, and the same finding where it finds one
// (TestProfileCanonStoredMatches, FuzzProfileCanonStored). Hand-written
// for a measured reason: a stored value is the value's eight big-endian
// bytes, a canonical one a tag and the same eight bytes, so the values
// are moved, not decoded and encoded again; decoding and encoding the
// profiles took 17 % of verify's CPU time on the 500 × 100 fleet
// (pprof), profiles being most of its bytes.
func appendProfileCanonStored(dst []byte, r *profileReader, dive uuid.UUID, step float64, s storedProfile) ([]byte, string) {
	vals, n, why := r.values(s)
	if why != "" {
		return dst, why
	}
	m := len(vals)/8 - 2*n
	c := profileCanonHead(dst, dive, step, n)
	c.growF64(2*n + m)
	o := len(c.b)
	c.b = c.b[:o+18*n]
	// Each value's eight bytes moved as one word (the bytes as they are);
	// copy() per value was 13 % of verify's CPU time (pprof, 500 × 100).
	tb, pb := vals[:8*n], vals[8*n:16*n]
	for i := 0; i < n; i++ {
		d := c.b[o+18*i : o+18*i+18]
		d[0] = 'f'
		binary.LittleEndian.PutUint64(d[1:], binary.LittleEndian.Uint64(tb[8*i:]))
		d[9] = 'f'
		binary.LittleEndian.PutUint64(d[10:], binary.LittleEndian.Uint64(pb[8*i:]))
	}
	c.strs(s.gauges)
	sb := vals[16*n:]
	c.b = slices.Grow(c.b, 9*m)
	o = len(c.b)
	c.b = c.b[:o+9*m]
	for i := 0; i < m; i++ {
		d := c.b[o+9*i : o+9*i+9]
		d[0] = 'f'
		binary.LittleEndian.PutUint64(d[1:], binary.LittleEndian.Uint64(sb[8*i:]))
	}
	return c.b, ""
}

// fromStored fills the profile's series from its stored form, the
// profile's gauges already read; a form it cannot read, or series that do
// not pair up, is returned as a finding (the ledger never stores one: the
// record was changed).
func (p *profileAcc) fromStored(r *profileReader, s storedProfile) string {
	vals, n, why := r.values(s)
	if why != "" {
		return why
	}
	p.TimeS = profilepack.AppendFloats(p.TimeS[:0], vals[:8*n])
	p.Press = profilepack.AppendFloats(p.Press[:0], vals[8*n:16*n])
	p.flat = profilepack.AppendFloats(p.flat[:0], vals[16*n:])
	p.Strain = p.Strain[:0]
	for g := range p.gauges {
		p.Strain = append(p.Strain, p.flat[g*n:(g+1)*n])
	}
	return ""
}

// flatStrain is the profile's strain, gauge after gauge, as stored.
func flatStrain(p *profileAcc) []float64 {
	out := make([]float64, 0, len(p.Strain)*len(p.TimeS))
	for _, g := range p.Strain {
		out = append(out, g...)
	}
	return out
}

// storeProfile stores a dive's decimated profile in tx, packed.
func storeProfile(ctx context.Context, tx pgx.Tx, dive, hull uuid.UUID, p *profileAcc) (chainRec, error) {
	gauges := p.gauges
	if gauges == nil {
		gauges = []string{}
	}
	series, err := profilepack.Pack(nil, nil, p.TimeS, p.Press, flatStrain(p))
	if err != nil {
		return chainRec{}, fmt.Errorf("packing the dive profile: %w", err)
	}
	if _, err := tx.Exec(ctx, `INSERT INTO dive_profiles (dive_id, hull_id, step_s, gauges, series) VALUES ($1,$2,$3,$4,$5)`,
		dive, hull, p.step, gauges, series); err != nil {
		return chainRec{}, fmt.Errorf("storing the dive profile: %w", err)
	}
	return chainRec{kind: "dive_profile", key: dive.String(), canon: profileCanon(dive, p)}, nil
}

// errProfileChanged is a stored profile hulltally cannot read as one: it
// was changed (verify reports it as a broken record).
var errProfileChanged = errors.New("the stored profile is not one hulltally wrote")

// diveHull is the hull of the dive $1, for the readers that read a dive's
// rows by its id: they read the rows of the dive's own hull only, so rows
// stored under a hull id that is no hull are never used, and a dive
// stored under two hulls is refused (the subquery returns two rows) —
// both of which verify reports (rows_of_no_hull, dive_of_two_hulls).
const diveHull = "(SELECT d.hull_id FROM dives d WHERE d.id = $1)"

// profileColumns are the columns a reader of stored profiles selects, in
// storedProfile's order after the step.
const profileColumns = "step_s, gauges, time_s, pressure_mpa, strain_ue, series"

// loadProfile reads a dive's stored profile.
func loadProfile(ctx context.Context, q querier, dive uuid.UUID) (*profileAcc, error) {
	p := &profileAcc{}
	var s storedProfile
	err := q.QueryRow(ctx, "SELECT "+profileColumns+" FROM dive_profiles WHERE dive_id = $1 AND hull_id = "+diveHull, dive).
		Scan(&p.step, &p.gauges, &s.ts, &s.press, &s.strain, &s.series)
	if err != nil {
		return nil, err
	}
	s.gauges = p.gauges
	if why := p.fromStored(&profileReader{}, s); why != "" {
		return nil, fmt.Errorf("dive %s: %w: %s", dive, errProfileChanged, why)
	}
	return p, nil
}

// packBatch is the profiles packProfiles packs in one transaction: at
// most this many, so its memory stays bounded whatever a hull holds.
const packBatch = 64

// ProfilesPacked says what Migrate's packing of the profiles stored
// before migration 020 did.
type ProfilesPacked struct {
	// Packed is the profiles packed.
	Packed int `json:"packed"`
	// Unreadable is the profiles left as stored because they cannot be
	// read as hulltally wrote them (the record was changed: verify
	// reports each).
	Unreadable int `json:"unreadable"`
}

// packProfiles packs the profiles stored as sent (before migration 020),
// hull by hull, packBatch at a time, each batch in one transaction: it
// reads a profile's values, packs them, checks that the packed form
// unpacks to the very same bytes, and only then replaces the row's series
// (the append-only guard of dive_profiles is switched off for that
// statement and on again in the same transaction, under the guards'
// advisory lock; other sessions never see it off). The values, and so
// the chain's hashes, do not change. A profile it cannot read is left as
// it is and counted.
func (l *Ledger) packProfiles(ctx context.Context) (ProfilesPacked, error) {
	var res ProfilesPacked
	rows, err := l.pool.Query(ctx, "SELECT DISTINCT hull_id FROM dive_profiles WHERE series IS NULL ORDER BY hull_id")
	if err != nil {
		return res, fmt.Errorf("packing profiles: finding the hulls: %w", err)
	}
	hulls, err := pgx.CollectRows(rows, pgx.RowTo[uuid.UUID])
	if err != nil {
		return res, fmt.Errorf("packing profiles: finding the hulls: %w", err)
	}
	var r profileReader
	var pk profilepack.Packer
	for _, hull := range hulls {
		last := uuid.Nil
		for {
			var n int
			err := pgx.BeginFunc(ctx, l.pool, func(tx pgx.Tx) error {
				var err error
				n, last, err = packProfileBatch(ctx, tx, &r, &pk, hull, last, &res)
				return err
			})
			if err != nil {
				return res, fmt.Errorf("packing the profiles of hull %s: %w", hull, err)
			}
			if n < packBatch {
				break
			}
		}
	}
	return res, nil
}

// packProfileBatch packs up to packBatch of a hull's profiles stored as
// sent, those after dive id after, in tx; it returns how many it read and
// the last dive id read.
func packProfileBatch(ctx context.Context, tx pgx.Tx, r *profileReader, pk *profilepack.Packer, hull, after uuid.UUID, res *ProfilesPacked) (int, uuid.UUID, error) {
	if _, err := tx.Exec(ctx, "SELECT pg_advisory_xact_lock(hashtext('hulltally append-only guards'))"); err != nil {
		return 0, after, fmt.Errorf("waiting for the guards' lock: %w", err)
	}
	rows, err := tx.Query(ctx, `SELECT dive_id, gauges, time_s, pressure_mpa, strain_ue FROM dive_profiles
		WHERE hull_id = $1 AND dive_id > $2 AND series IS NULL ORDER BY dive_id LIMIT $3 FOR UPDATE`, hull, after, packBatch)
	if err != nil {
		return 0, after, fmt.Errorf("reading profiles as sent: %w", err)
	}
	var ids []uuid.UUID
	var packs [][]byte
	n := 0
	for rows.Next() {
		var id uuid.UUID
		var s storedProfile
		if err := rows.Scan(&id, &s.gauges, &s.ts, &s.press, &s.strain); err != nil {
			rows.Close()
			return 0, after, err
		}
		n, after = n+1, id
		vals, pts, why := r.values(s)
		if why != "" {
			res.Unreadable++
			continue
		}
		all := profilepack.AppendFloats(nil, vals)
		packed, err := profilepack.Pack(nil, pk, all[:pts], all[pts:2*pts], all[2*pts:])
		if err != nil {
			rows.Close()
			return 0, after, fmt.Errorf("dive %s: %w", id, err)
		}
		back, _, _, err := profilepack.Unpack(packed, nil, nil)
		if err != nil || back.N != pts || !slices.Equal(back.Values, vals) {
			rows.Close()
			return 0, after, fmt.Errorf("dive %s: the packed profile does not unpack to the stored values (%v)", id, err)
		}
		ids, packs = append(ids, id), append(packs, packed)
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return 0, after, fmt.Errorf("reading profiles as sent: %w", err)
	}
	if len(ids) == 0 {
		return n, after, nil
	}
	// The guard goes back as it was: firing in ordinary sessions (O) or
	// always (A, which an administrator may have chosen so that replica
	// sessions cannot skip it). Migrate restored any other state first.
	var mode string
	if err := tx.QueryRow(ctx, "SELECT tgenabled::text FROM pg_trigger WHERE tgrelid = 'dive_profiles'::regclass AND tgname = 'dive_profiles_append_only'").Scan(&mode); err != nil {
		return 0, after, fmt.Errorf("reading the append-only guard of dive_profiles: %w", err)
	}
	enable := map[string]string{"O": "ENABLE TRIGGER", "A": "ENABLE ALWAYS TRIGGER"}[mode]
	if enable == "" {
		return 0, after, fmt.Errorf("the append-only guard of dive_profiles is in state %q, not firing: nothing packed", mode)
	}
	if _, err := tx.Exec(ctx, "ALTER TABLE dive_profiles DISABLE TRIGGER dive_profiles_append_only"); err != nil {
		return 0, after, fmt.Errorf("switching the guard off for the batch: %w", err)
	}
	var batch pgx.Batch
	for k, id := range ids {
		batch.Queue(`UPDATE dive_profiles SET series = $3, time_s = NULL, pressure_mpa = NULL, strain_ue = NULL
			WHERE hull_id = $1 AND dive_id = $2 AND series IS NULL`, hull, id, packs[k]).Exec(func(tag pgconn.CommandTag) error {
			if tag.RowsAffected() != 1 {
				return fmt.Errorf("dive %s: %d rows replaced, want 1", id, tag.RowsAffected())
			}
			return nil
		})
	}
	if err := tx.SendBatch(ctx, &batch).Close(); err != nil {
		return 0, after, fmt.Errorf("replacing profiles by their packed form: %w", err)
	}
	if _, err := tx.Exec(ctx, "ALTER TABLE dive_profiles "+enable+" dive_profiles_append_only"); err != nil {
		return 0, after, fmt.Errorf("switching the guard on again: %w", err)
	}
	res.Packed += len(ids)
	return n, after, nil
}
