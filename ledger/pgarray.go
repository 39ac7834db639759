package ledger

import (
	"encoding/binary"
	"errors"
	"fmt"
	"math"
	"slices"

	"github.com/jackc/pgx/v5"
)

// float8OID is PostgreSQL's type oid of float8.
const float8OID = 701

// errFloat8Array is a float8[] value verify cannot read as a list of
// numbers: not one-dimensional, holding a NULL, or cut short.
var errFloat8Array = errors.New("not a one-dimensional float8 array without NULLs")

// float8Column appends the float8[] in column col of the current row to
// dst, read from the row's raw bytes (valid until the next row; scan the
// column as nil). A NULL array or element, or any other shape, is
// errFloat8Array (the ledger never stores one: the record was changed);
// a column not sent in binary is another error.
func float8Column(rows pgx.Rows, col int, dst []float64) ([]float64, error) {
	if f := rows.FieldDescriptions(); col >= len(f) || f[col].Format != pgx.BinaryFormatCode {
		return dst, fmt.Errorf("column %d of %d: not sent in binary", col+1, len(f))
	}
	raw := rows.RawValues()[col]
	if raw == nil {
		return dst, fmt.Errorf("%w: NULL", errFloat8Array)
	}
	return appendFloat8Array(dst, raw)
}

// float8Columns reads the float8[] columns cols of the current row into
// dst (one slice each, reused: pass nil slices for fresh ones). A column
// that is not a list of numbers is a finding (why), not an error.
func float8Columns(rows pgx.Rows, dst [][]float64, cols ...int) (why string, err error) {
	for i, col := range cols {
		if dst[i], err = float8Column(rows, col, dst[i][:0]); err != nil {
			if errors.Is(err, errFloat8Array) {
				return fmt.Sprintf("column %s: %v (the stored record was changed)", rows.FieldDescriptions()[col].Name, err), nil
			}
			return "", err
		}
	}
	return "", nil
}

// appendFloat8Array decodes a float8[] value in PostgreSQL's binary
// array format and appends its elements to dst. It is hand-written for a
// measured reason: verify reads every stored profile, cycle and hold
// array of the fleet, and pgx's generic array codec took 28 % of
// verify's CPU time on a 50 × 100 fleet (pprof); this is a loop over
// 12-byte elements. It accepts exactly the form hulltally's arrays take
// (what array_send gives for them; profiles were stored so before
// migration 020): no dimensions when empty, else one dimension with a
// lower bound of 1,
// at least one element, the NULL flag clear, every element 8 bytes.
// Anything else is errFloat8Array, even where the values would read the
// same (a lower bound of 5, a NULL flag set with no NULL): hulltally
// never stores such a form, so the record was changed
// (TestFloat8ArrayMatchesPgx checks it against pgx's own decoding).
func appendFloat8Array(dst []float64, src []byte) ([]float64, error) {
	body, err := float8Checked(src)
	if err != nil {
		return dst, err
	}
	return appendFloat8Body(dst, body), nil
}

// appendFloat8Body appends the values of elements float8Checked accepted.
func appendFloat8Body(dst []float64, body []byte) []float64 {
	n := len(body) / 12
	dst = slices.Grow(dst, n)
	for i := 0; i < n; i++ {
		dst = append(dst, math.Float64frombits(binary.BigEndian.Uint64(body[12*i+4:])))
	}
	return dst
}

// float8Checked checks a float8[] value in PostgreSQL's binary array
// format as appendFloat8Array accepts it, header and every element's
// length word, and returns its elements: 12 bytes each, the length (8)
// then the value's eight big-endian bytes. An empty array has none.
func float8Checked(src []byte) ([]byte, error) {
	body, err := float8Sent(src)
	if err != nil {
		return nil, err
	}
	for i := 0; i < len(body)/12; i++ {
		if l := int32(binary.BigEndian.Uint32(body[12*i:])); l != 8 {
			// -1 would be a NULL.
			return nil, fmt.Errorf("%w: element %d has length %d", errFloat8Array, i+1, l)
		}
	}
	return body, nil
}

// float8Sent checks the header of a float8[] value in PostgreSQL's binary
// array format, as appendFloat8Array accepts it, and returns its
// elements, their length words not yet checked (float8Checked).
func float8Sent(src []byte) (body []byte, err error) {
	if len(src) < 12 {
		return nil, fmt.Errorf("%w: %d bytes of header", errFloat8Array, len(src))
	}
	ndim := binary.BigEndian.Uint32(src[0:])
	if flag := binary.BigEndian.Uint32(src[4:]); flag != 0 {
		return nil, fmt.Errorf("%w: NULL flag %d", errFloat8Array, flag)
	}
	elem := binary.BigEndian.Uint32(src[8:])
	if elem != float8OID {
		return nil, fmt.Errorf("%w: element type %d", errFloat8Array, elem)
	}
	switch ndim {
	case 0:
		if len(src) != 12 {
			return nil, fmt.Errorf("%w: %d bytes after an empty array", errFloat8Array, len(src)-12)
		}
		return src[12:], nil
	case 1:
	default:
		return nil, fmt.Errorf("%w: %d dimensions", errFloat8Array, ndim)
	}
	if len(src) < 20 {
		return nil, fmt.Errorf("%w: cut short in its dimension", errFloat8Array)
	}
	n := int(int32(binary.BigEndian.Uint32(src[12:])))
	if lb := int32(binary.BigEndian.Uint32(src[16:])); lb != 1 {
		return nil, fmt.Errorf("%w: lower bound %d", errFloat8Array, lb)
	}
	body = src[20:]
	// n > len(body)/12 first: 12*n cannot overflow then, on any int size.
	if n < 1 || n > len(body)/12 || len(body) != 12*n {
		return nil, fmt.Errorf("%w: %d elements in %d bytes", errFloat8Array, n, len(body))
	}
	return body, nil
}
