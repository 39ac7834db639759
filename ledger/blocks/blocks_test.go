package blocks

import (
	"errors"
	"math"
	"math/rand/v2"
	"regexp"
	"strconv"
	"testing"
)

func TestParseDecimal(t *testing.T) {
	tests := []struct {
		in    string
		mant  int64
		scale uint8
		ok    bool
	}{
		{"0", 0, 0, true},
		{"12.50", 1250, 2, true},
		{"-0.001", -1, 3, true},
		{"+7", 7, 0, true},
		{".5", 5, 1, true},
		{"5.", 5, 0, true},
		{"123456789012345678", 123456789012345678, 0, true},
		{"1234567890123456789", 0, 0, false},
		{"0.000000000000000001", 1, 18, true},
		{"0.0000000000000000001", 0, 0, false},
		{"1e5", 0, 0, false},
		{"NaN", 0, 0, false},
		{"", 0, 0, false},
		{"-", 0, 0, false},
		{".", 0, 0, false},
		{"1.2.3", 0, 0, false},
		{" 1", 0, 0, false},
	}
	for _, tc := range tests {
		m, s, ok := ParseDecimal([]byte(tc.in))
		if ok != tc.ok || (ok && (m != tc.mant || s != tc.scale)) {
			t.Errorf("ParseDecimal(%q) = %d, %d, %v; want %d, %d, %v", tc.in, m, s, ok, tc.mant, tc.scale, tc.ok)
		}
	}
}

// The float64 of a parsed decimal must equal what strconv.ParseFloat gives
// for the same text (both correctly rounded).
func TestDecimalValueMatchesParseFloat(t *testing.T) {
	r := rand.New(rand.NewPCG(1, 2))
	for i := 0; i < 200000; i++ {
		mant := r.Int64N(1<<62) >> uint(r.IntN(62))
		if r.IntN(2) == 0 {
			mant = -mant
		}
		scale := uint8(r.IntN(19))
		txt := strconv.FormatInt(mant, 10)
		m, s, ok := ParseDecimal([]byte(insertPoint(txt, int(scale))))
		if !ok {
			continue
		}
		want, _ := strconv.ParseFloat(insertPoint(txt, int(scale)), 64)
		if got := DecimalValue(m, s); got != want {
			t.Fatalf("%s: DecimalValue %v, ParseFloat %v", insertPoint(txt, int(scale)), got, want)
		}
	}
}

func insertPoint(s string, scale int) string {
	neg := ""
	if s[0] == '-' {
		neg, s = "-", s[1:]
	}
	for len(s) <= scale {
		s = "0" + s
	}
	if scale == 0 {
		return neg + s
	}
	return neg + s[:len(s)-scale] + "." + s[len(s)-scale:]
}

func TestRoundTrip(t *testing.T) {
	r := rand.New(rand.NewPCG(3, 4))
	b := NewBlock(3, 100)
	t0 := int64(1_700_000_000_000_000_000)
	walk := int64(400000)
	for i := 0; i < 1000; i++ {
		b.TimeNS = append(b.TimeNS, t0+int64(i)*10_000_000+int64(r.IntN(3)))
		walk += int64(r.IntN(101) - 50)
		b.Cols[0].AppendDecimal(walk, 2)
		b.Cols[1].AppendDecimal(-int64(r.IntN(4000)), 1)
		if i == 500 {
			b.Cols[2].AppendFloat(1.5e-7)
		} else {
			b.Cols[2].AppendDecimal(int64(i), 2)
		}
	}
	enc := Encode(nil, b)
	d, err := Decode(enc)
	if err != nil {
		t.Fatal(err)
	}
	for i := range b.TimeNS {
		if d.TimeNS[i] != b.TimeNS[i] {
			t.Fatalf("time %d: %d != %d", i, d.TimeNS[i], b.TimeNS[i])
		}
		for c := 0; c < 3; c++ {
			if math.Float64bits(d.Values[c][i]) != math.Float64bits(b.Cols[c].Value[i]) {
				t.Fatalf("col %d row %d: %v != %v", c, i, d.Values[c][i], b.Cols[c].Value[i])
			}
		}
	}
	if !d.Decimal[0] || !d.Decimal[1] || d.Decimal[2] {
		t.Fatalf("modes: %v", d.Decimal)
	}
	// 1000 rows x (8 time + 3x8 value) bytes raw = 32000. Expected size:
	// time 1 byte a row (delta-of-delta within ±2 ns), the walk and the
	// 0..4000 column at most 2 bytes a row each, the third column binary
	// (one non-decimal value) 8 bytes a row: at most 13000 + headers.
	if len(enc) > 13100 {
		t.Errorf("encoded %d bytes, want <= 13100", len(enc))
	}
	// Every single-byte corruption is either detected by Decode or changes
	// the decoded content (the SHA-256 of the bytes catches the rest).
	for _, cut := range []int{0, 3, len(enc) / 2, len(enc) - 1} {
		if _, err := Decode(enc[:cut]); err == nil {
			t.Errorf("truncated block (%d bytes) decoded without error", cut)
		}
	}
}

func FuzzDecode(f *testing.F) {
	b := NewBlock(2, 4)
	for i := 0; i < 4; i++ {
		b.TimeNS = append(b.TimeNS, int64(i))
		b.Cols[0].AppendDecimal(int64(i*3), 1)
		b.Cols[1].AppendFloat(float64(i) / 3)
	}
	f.Add(Encode(nil, b))
	f.Add([]byte("HTB1"))
	f.Fuzz(func(t *testing.T, data []byte) {
		d, err := Decode(data)
		if err != nil {
			return
		}
		// Every column holds a value per row, or none at all (the time
		// column's slot).
		for c, vs := range d.Values {
			if vs != nil && len(vs) != len(d.TimeNS) {
				t.Fatalf("column %d has %d values for %d rows", c, len(vs), len(d.TimeNS))
			}
		}
		// Decode, encode, decode: what was accepted encodes again (decimal
		// columns with their mantissas and scales, the others as bits) and
		// decodes to the same times and values, bit for bit.
		b := NewBlock(len(d.Values), len(d.TimeNS))
		b.TimeNS = append(b.TimeNS, d.TimeNS...)
		for c := range d.Values {
			for i, v := range d.Values[c] { // none for an empty column: it encodes empty again
				if d.Decimal[c] {
					b.Cols[c].AppendDecimal(d.Mant[c][i], d.Scale[c])
				} else {
					b.Cols[c].AppendFloat(v)
				}
			}
		}
		d2, err := Decode(Encode(nil, b))
		if err != nil {
			t.Fatalf("a decoded block does not decode again after encoding: %v", err)
		}
		if len(d2.TimeNS) != len(d.TimeNS) || len(d2.Values) != len(d.Values) {
			t.Fatalf("round trip changed the shape: %d×%d → %d×%d", len(d.TimeNS), len(d.Values), len(d2.TimeNS), len(d2.Values))
		}
		for i := range d.TimeNS {
			if d2.TimeNS[i] != d.TimeNS[i] {
				t.Fatalf("time %d: %d → %d", i, d.TimeNS[i], d2.TimeNS[i])
			}
		}
		for c := range d.Values {
			if len(d2.Values[c]) != len(d.Values[c]) {
				t.Fatalf("column %d: %d values → %d", c, len(d.Values[c]), len(d2.Values[c]))
			}
			for i := range d.Values[c] {
				if math.Float64bits(d2.Values[c][i]) != math.Float64bits(d.Values[c][i]) {
					t.Fatalf("column %d row %d: %v → %v", c, i, d.Values[c][i], d2.Values[c][i])
				}
			}
		}
	})
}

func TestPlainNumber(t *testing.T) {
	tests := []struct {
		in string
		ok bool
	}{
		{"0", true}, {"-12.50", true}, {"+7", true}, {".5", true}, {"5.", true},
		{"1e5", true}, {"1E-5", true}, {"-2.5e+10", true}, {"007", true}, {".5e1", true},
		{"", false}, {".", false}, {"+.", false}, {"-", false}, {"+", false}, {"e5", false}, {".e5", false},
		{"1e", false}, {"1e+", false}, {"1e-", false}, {"1_000", false}, {"0x1p3", false}, {"0x10", false},
		{"Inf", false}, {"-Inf", false}, {"infinity", false}, {"NaN", false}, {"1.2.3", false},
		{" 1", false}, {"1 ", false}, {"1,5", false}, {"--1", false}, {"+-1", false}, {"1e5.0", false},
		{"1d3", false}, {"١", false}, {"1e1e1", false}, {"1.e", false},
	}
	for _, tc := range tests {
		if got := PlainNumber([]byte(tc.in)); got != tc.ok {
			t.Errorf("PlainNumber(%q) = %v, want %v", tc.in, got, tc.ok)
		}
	}
}

func TestWholeNumber(t *testing.T) {
	tests := []struct {
		in string
		v  int64
		ok bool
	}{
		{"0", 0, true}, {"42", 42, true}, {"007", 7, true}, {"999999999999999999", 999999999999999999, true},
		{"1000000000000000000", 0, false}, {"", 0, false}, {"+1", 0, false}, {"-0", 0, false},
		{"1.0", 0, false}, {"1e3", 0, false}, {"1_000", 0, false}, {" 1", 0, false}, {"0x1", 0, false},
	}
	for _, tc := range tests {
		v, ok := WholeNumber([]byte(tc.in))
		if ok != tc.ok || (ok && v != tc.v) {
			t.Errorf("WholeNumber(%q) = %d, %v; want %d, %v", tc.in, v, ok, tc.v, tc.ok)
		}
	}
}

// An independent statement of the number syntax.
var (
	plainNumberRE  = regexp.MustCompile(`^[+-]?([0-9]+\.?[0-9]*|\.[0-9]+)([eE][+-]?[0-9]+)?$`)
	plainDecimalRE = regexp.MustCompile(`^[+-]?([0-9]+\.?[0-9]*|\.[0-9]+)$`)
)

func FuzzParseDecimal(f *testing.F) {
	for _, s := range []string{"1", "-2.5", "0.0001", "1e3", "", ".", "+.", "1_000", "0x1p3", "Inf", "NaN", "1e", "-.5e-3"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		plain := PlainNumber([]byte(s))
		if plain != plainNumberRE.MatchString(s) {
			t.Fatalf("PlainNumber(%q) = %v", s, plain)
		}
		if plain {
			// The syntax is one strconv.ParseFloat reads: only a range
			// error is possible.
			if _, err := strconv.ParseFloat(s, 64); err != nil && !errors.Is(err, strconv.ErrRange) {
				t.Fatalf("PlainNumber accepted %q which ParseFloat refuses: %v", s, err)
			}
		}
		if v, ok := WholeNumber([]byte(s)); ok {
			want, err := strconv.ParseInt(s, 10, 64)
			if !digitsOnly(s) || err != nil || v != want {
				t.Fatalf("WholeNumber accepted %q as %d", s, v)
			}
		}
		m, sc, ok := ParseDecimal([]byte(s))
		if !ok {
			return
		}
		if !plainDecimalRE.MatchString(s) {
			t.Fatalf("ParseDecimal accepted %q, not a plain decimal", s)
		}
		want, err := strconv.ParseFloat(s, 64)
		if err != nil {
			t.Fatalf("ParseDecimal accepted %q which ParseFloat refuses", s)
		}
		if got := DecimalValue(m, sc); got != want {
			t.Fatalf("%q: %v != %v", s, got, want)
		}
	})
}

func digitsOnly(s string) bool {
	for _, c := range s {
		if c < '0' || c > '9' {
			return false
		}
	}
	return s != ""
}
