package ledger

import (
	"context"
	"encoding/binary"
	"math"
	"slices"
	"time"
)

// EvaluateAcross evaluates a hull at at in a snapshot, runs between (a
// write by someone else, say) and then notes the evaluation as every
// write does: the race a derived summary must not lose.
func (l *Ledger) EvaluateAcross(ctx context.Context, serial string, at time.Time, between func() error) error {
	e, err := l.evaluate(ctx, serial, at)
	if err != nil {
		return err
	}
	if err := between(); err != nil {
		return err
	}
	return l.noteFitness(ctx, e)
}

// AppendFloat8Array, Float8Column and ErrFloat8Array expose the float8[] decoder to
// its test, which needs a real server (TestFloat8ArrayMatchesPgx).
var (
	AppendFloat8Array = appendFloat8Array
	Float8Column      = float8Column
	AppendFloat8Sent  = appendFloat8Sent
	ErrFloat8Array    = errFloat8Array
)

// ProfileCanonBothWays returns a stored profile's canonical bytes, or its
// finding, made both ways: straight from the stored values (what verify's
// batch does) and from the values decoded (what the one-record read
// does). ts, press and strain are the form as sent, series the packed
// form (nil: NULL).
func ProfileCanonBothWays(dive [16]byte, step float64, gauges []string, ts, press, strain, series []byte) (direct []byte, directWhy string, decoded []byte, decodedWhy string) {
	s := storedProfile{gauges: gauges, ts: ts, press: press, strain: strain, series: series}
	direct, directWhy = appendProfileCanonStored(nil, &profileReader{}, dive, step, s)
	p := &profileAcc{step: step, gauges: gauges}
	if decodedWhy = p.fromStored(&profileReader{}, s); decodedWhy == "" {
		decoded = profileCanon(dive, p)
	}
	if directWhy != "" {
		direct = nil
	}
	return direct, directWhy, decoded, decodedWhy
}

// HullRowTables exposes the tables verify checks for rows of no hull.
var HullRowTables = hullRowTables()

// DiveOfTwoHulls runs verify's check for a dive id stored under two hulls.
func (l *Ledger) DiveOfTwoHulls(ctx context.Context) (*Broken, error) {
	return diveOfTwoHulls(ctx, l.pool)
}

// ErrProfileChanged exposes the error of a stored profile not as
// hulltally wrote it.
var ErrProfileChanged = errProfileChanged

// appendFloat8Sent appends vs to dst in the binary form PostgreSQL sends
// a one-dimensional float8[] in (array_send): what dive_profiles stored
// before migration 020, which the tests write to check its reader. The
// same bytes as array_send of the same values (TestProfileBytesAsSent).
func appendFloat8Sent(dst []byte, vs []float64) []byte {
	if len(vs) == 0 {
		// No dimensions, no NULLs, float8.
		return binary.BigEndian.AppendUint32(append(dst, 0, 0, 0, 0, 0, 0, 0, 0), float8OID)
	}
	dst = slices.Grow(dst, 20+12*len(vs))
	dst = binary.BigEndian.AppendUint32(dst, 1) // dimensions
	dst = binary.BigEndian.AppendUint32(dst, 0) // no NULLs
	dst = binary.BigEndian.AppendUint32(dst, float8OID)
	dst = binary.BigEndian.AppendUint32(dst, uint32(len(vs)))
	dst = binary.BigEndian.AppendUint32(dst, 1) // lower bound
	for _, v := range vs {
		dst = binary.BigEndian.AppendUint32(dst, 8)
		dst = binary.BigEndian.AppendUint64(dst, math.Float64bits(v))
	}
	return dst
}
