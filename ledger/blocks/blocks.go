// Package blocks encodes a block of consecutive samples of a dive — time
// stamps and every column of the source file — into compact bytes, and
// decodes them back without loss.
//
// Layout (all integers little-endian varints unless said otherwise):
//
//	"HTB1"                       magic and version
//	uvarint rows, uvarint cols
//	time: zigzag t0, zigzag (t1-t0), then zigzag delta-of-delta per row (ns)
//	per column: mode byte
//	  mode 0 (decimal): scale byte s, then zigzag v0, zigzag deltas, where
//	        the value is v/10^s exactly (the decimal text of the file)
//	  mode 1 (binary):  8 bytes per row, IEEE-754 bits of the float64 value
//	  mode 2 (empty):   the time column's slot, whose values are the times
//
// A decimal value keeps the exact number written in the file (trailing
// zeros aside); a value that is not a plain decimal of at most 18 digits
// (an exponent, very long mantissa) switches its column, in that block
// only, to binary mode, which keeps the float64 the file's text parses to.
package blocks

import (
	"encoding/binary"
	"errors"
	"fmt"
	"math"
)

var magic = [4]byte{'H', 'T', 'B', '1'}

// MaxScale is the most decimal places a decimal value may have.
const MaxScale = 18

// Pow10 holds exact powers of ten 10^0 … 10^18 as int64.
var pow10i = [...]int64{1, 10, 100, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18}

// pow10f holds exact float64 powers of ten up to 1e22.
var pow10f = [...]float64{1, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22}

// Column is one column of a block while it is filled (the time column's
// slot stays empty): each value is kept
// as a decimal (Mant × 10^-Scale) when it was written as one, and as a
// float64 always.
type Column struct {
	Mant   []int64
	Scale  []uint8
	Value  []float64
	binary bool
}

// Block is a block of consecutive samples.
type Block struct {
	TimeNS []int64
	Cols   []Column
}

// NewBlock makes an empty block for cols columns and up to capacity rows.
func NewBlock(cols, capacity int) *Block {
	b := &Block{TimeNS: make([]int64, 0, capacity), Cols: make([]Column, cols)}
	for i := range b.Cols {
		b.Cols[i] = Column{Mant: make([]int64, 0, capacity), Scale: make([]uint8, 0, capacity), Value: make([]float64, 0, capacity)}
	}
	return b
}

// Reset empties the block, keeping its memory.
func (b *Block) Reset() {
	b.TimeNS = b.TimeNS[:0]
	for i := range b.Cols {
		c := &b.Cols[i]
		c.Mant, c.Scale, c.Value, c.binary = c.Mant[:0], c.Scale[:0], c.Value[:0], false
	}
}

// Len is the number of rows.
func (b *Block) Len() int { return len(b.TimeNS) }

// AppendDecimal appends a decimal value mant × 10^-scale (scale ≤ 18) to
// column c.
func (c *Column) AppendDecimal(mant int64, scale uint8) {
	c.Mant = append(c.Mant, mant)
	c.Scale = append(c.Scale, scale)
	c.Value = append(c.Value, DecimalValue(mant, scale))
}

// AppendFloat appends a value that is not a plain decimal.
func (c *Column) AppendFloat(v float64) {
	c.Mant = append(c.Mant, 0)
	c.Scale = append(c.Scale, 0)
	c.Value = append(c.Value, v)
	c.binary = true
}

// DecimalValue is the float64 nearest to mant × 10^-scale. For |mant| ≤
// 2^53 the division of two exact values is correctly rounded, the same
// value strconv.ParseFloat gives for the decimal text.
func DecimalValue(mant int64, scale uint8) float64 {
	if mant > 1<<53 || mant < -(1<<53) {
		// Slow path, still correctly rounded.
		return parseDecimal(mant, scale)
	}
	return float64(mant) / pow10f[scale]
}

// Encode appends the encoding of b to dst.
func Encode(dst []byte, b *Block) []byte {
	n := b.Len()
	dst = append(dst, magic[:]...)
	dst = binary.AppendUvarint(dst, uint64(n))
	dst = binary.AppendUvarint(dst, uint64(len(b.Cols)))
	var prev, prevDelta int64
	for i, t := range b.TimeNS {
		switch i {
		case 0:
			dst = appendZigzag(dst, t)
		default:
			d := t - prev
			dst = appendZigzag(dst, d-prevDelta)
			prevDelta = d
		}
		prev = t
	}
	for ci := range b.Cols {
		dst = encodeColumn(dst, &b.Cols[ci], n)
	}
	return dst
}

func encodeColumn(dst []byte, c *Column, n int) []byte {
	if len(c.Value) == 0 {
		// The time column's slot: its values are the time stamps.
		return append(dst, 2)
	}
	if !c.binary {
		var s uint8
		for _, sc := range c.Scale[:n] {
			if sc > s {
				s = sc
			}
		}
		// Check that every value fits at the common scale.
		ok := true
		for i := 0; i < n && ok; i++ {
			k := s - c.Scale[i]
			if k == 0 {
				continue
			}
			m := c.Mant[i]
			lim := math.MaxInt64 / pow10i[k]
			if m > lim || m < -lim {
				ok = false
			}
		}
		if ok {
			dst = append(dst, 0, s)
			var prev int64
			for i := 0; i < n; i++ {
				v := c.Mant[i] * pow10i[s-c.Scale[i]]
				dst = appendZigzag(dst, v-prev)
				prev = v
			}
			return dst
		}
	}
	dst = append(dst, 1)
	for _, v := range c.Value[:n] {
		dst = binary.LittleEndian.AppendUint64(dst, math.Float64bits(v))
	}
	return dst
}

func appendZigzag(dst []byte, v int64) []byte {
	return binary.AppendUvarint(dst, uint64(v<<1)^uint64(v>>63))
}

// Decoded is a decoded block.
type Decoded struct {
	TimeNS []int64
	// Values[c][i] is column c at row i.
	Values [][]float64
	// Decimal[c] reports whether column c was stored as decimals, and
	// Scale[c] their scale; Mant[c][i] is then the exact scaled integer.
	Decimal []bool
	Scale   []uint8
	Mant    [][]int64
}

// ErrCorrupt is returned for bytes that are not a valid block.
var ErrCorrupt = errors.New("corrupt reading block")

// Decode decodes a block.
func Decode(data []byte) (*Decoded, error) {
	if len(data) < 4 || [4]byte(data[:4]) != magic {
		return nil, fmt.Errorf("%w: bad magic", ErrCorrupt)
	}
	p := data[4:]
	rd := func() (uint64, error) {
		v, k := binary.Uvarint(p)
		if k <= 0 {
			return 0, fmt.Errorf("%w: truncated varint", ErrCorrupt)
		}
		p = p[k:]
		return v, nil
	}
	rz := func() (int64, error) {
		u, err := rd()
		return int64(u>>1) ^ -int64(u&1), err
	}
	n64, err := rd()
	if err != nil {
		return nil, err
	}
	nc64, err := rd()
	if err != nil {
		return nil, err
	}
	if n64 > uint64(len(data)) || nc64 > 4096 {
		return nil, fmt.Errorf("%w: implausible size %d×%d", ErrCorrupt, n64, nc64)
	}
	n, nc := int(n64), int(nc64)
	d := &Decoded{TimeNS: make([]int64, n), Values: make([][]float64, nc), Decimal: make([]bool, nc), Scale: make([]uint8, nc), Mant: make([][]int64, nc)}
	var prev, prevDelta int64
	for i := 0; i < n; i++ {
		z, err := rz()
		if err != nil {
			return nil, err
		}
		if i == 0 {
			prev = z
		} else {
			prevDelta += z
			prev += prevDelta
		}
		d.TimeNS[i] = prev
	}
	for c := 0; c < nc; c++ {
		if len(p) < 1 {
			return nil, fmt.Errorf("%w: missing column %d", ErrCorrupt, c)
		}
		mode := p[0]
		p = p[1:]
		vals := make([]float64, n)
		switch mode {
		case 0:
			if len(p) < 1 || p[0] > MaxScale {
				return nil, fmt.Errorf("%w: bad scale in column %d", ErrCorrupt, c)
			}
			s := p[0]
			p = p[1:]
			mant := make([]int64, n)
			var v int64
			for i := 0; i < n; i++ {
				z, err := rz()
				if err != nil {
					return nil, err
				}
				v += z
				mant[i] = v
				vals[i] = DecimalValue(v, s)
			}
			d.Decimal[c], d.Scale[c], d.Mant[c] = true, s, mant
		case 1:
			if len(p) < 8*n {
				return nil, fmt.Errorf("%w: truncated binary column %d", ErrCorrupt, c)
			}
			for i := 0; i < n; i++ {
				vals[i] = math.Float64frombits(binary.LittleEndian.Uint64(p[8*i:]))
			}
			p = p[8*n:]
		case 2:
			vals = nil
		default:
			return nil, fmt.Errorf("%w: unknown mode %d in column %d", ErrCorrupt, mode, c)
		}
		d.Values[c] = vals
	}
	if len(p) != 0 {
		return nil, fmt.Errorf("%w: %d trailing bytes", ErrCorrupt, len(p))
	}
	return d, nil
}
