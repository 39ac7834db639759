package profilepack_test

import (
	"bytes"
	"encoding/binary"
	"errors"
	"math"
	"math/rand/v2"
	"testing"

	"hulltally/ledger/profilepack"
)

// profile is a dive-like profile: times every step seconds, a pressure
// ramp with noise, and gauges of strain with noise (invented; the
// expected values of the tests are the inputs themselves, bit for bit).
func profile(n, gauges int, seed uint64) (ts, press, strain []float64) {
	r := rand.New(rand.NewPCG(seed, 1))
	for i := 0; i < n; i++ {
		ts = append(ts, 5*float64(i))
		press = append(press, 40*math.Sin(math.Pi*float64(i)/float64(n))+0.01*r.NormFloat64())
	}
	for g := 0; g < gauges; g++ {
		for i := 0; i < n; i++ {
			strain = append(strain, -3000*press[i]/40+2*r.NormFloat64())
		}
	}
	return ts, press, strain
}

func bitsOf(vs ...[]float64) []uint64 {
	var out []uint64
	for _, s := range vs {
		for _, v := range s {
			out = append(out, math.Float64bits(v))
		}
	}
	return out
}

func TestRoundTrip(t *testing.T) {
	ts, press, strain := profile(1000, 3, 7)
	cases := []struct {
		name              string
		ts, press, strain []float64
	}{
		{"nothing", nil, nil, nil},
		{"one point, no gauges", []float64{0}, []float64{0.1}, nil},
		{"further values only", nil, nil, []float64{1, 2}},
		{"every kind of float", []float64{math.Copysign(0, -1), math.Inf(1), math.NaN(), math.SmallestNonzeroFloat64},
			[]float64{math.MaxFloat64, math.Inf(-1), math.Float64frombits(0x7ff8000000000001), -1e-300}, []float64{1, -1, 0, 3}},
		{"a dive", ts, press, strain},
		{"incompressible", noise(4096, 1), noise(4096, 2), nil},
		// The most compressible profile there is: LZ4's ratio is near its
		// bound, which Unpack must still accept.
		{"all zero, 20 000 points of 10 gauges", make([]float64, 20000), make([]float64, 20000), make([]float64, 200000)},
	}
	var c profilepack.Packer
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			prefix := []byte("kept")
			packed, err := profilepack.Pack(append([]byte(nil), prefix...), &c, tc.ts, tc.press, tc.strain)
			if err != nil {
				t.Fatal(err)
			}
			if !bytes.HasPrefix(packed, prefix) {
				t.Fatalf("Pack did not append: %x", packed[:4])
			}
			u, _, _, err := profilepack.Unpack(packed[len(prefix):], nil, nil)
			if err != nil {
				t.Fatal(err)
			}
			t.Logf("%d values in %d bytes", 2*u.N+u.M, len(packed)-len(prefix))
			if u.N != len(tc.ts) || u.M != len(tc.strain) || len(u.Values) != 8*(2*u.N+u.M) {
				t.Fatalf("unpacked %d points, %d further values in %d bytes; packed %d, %d", u.N, u.M, len(u.Values), len(tc.ts), len(tc.strain))
			}
			got := bitsOf(u.Float(nil, 0, 2*u.N+u.M))
			want := bitsOf(tc.ts, tc.press, tc.strain)
			if len(got) != len(want) {
				t.Fatalf("%d values, want %d", len(got), len(want))
			}
			for i := range want {
				if got[i] != want[i] {
					t.Fatalf("value %d: %016x, want %016x", i, got[i], want[i])
				}
			}
			for i, w := range want {
				if b := binary.BigEndian.Uint64(u.Values[8*i:]); b != w {
					t.Fatalf("Values %d: %016x, want %016x", i, b, w)
				}
			}
		})
	}
}

func noise(n int, seed uint64) []float64 {
	r := rand.New(rand.NewPCG(seed, 2))
	out := make([]float64, n)
	for i := range out {
		out[i] = math.Float64frombits(r.Uint64())
	}
	return out
}

// TestPackedIsSmaller: the point of packing. A dive of 1 000 points and 3
// gauges is 5 000 values: 40 000 bytes as they are, 60 060 as PostgreSQL
// sends them as three float8[] (20 bytes of header each, then 12 a value);
// packed, under half that even with noise in every value (26 379 bytes
// here: the low mantissa bytes of noisy values do not compress).
func TestPackedIsSmaller(t *testing.T) {
	ts, press, strain := profile(1000, 3, 7)
	packed, err := profilepack.Pack(nil, nil, ts, press, strain)
	if err != nil {
		t.Fatal(err)
	}
	if sent := 3*20 + 12*(len(ts)+len(press)+len(strain)); len(packed) > sent/2 {
		t.Errorf("packed %d bytes for %d bytes sent as float8[]", len(packed), sent)
	}
	t.Logf("%d values packed in %d bytes", len(ts)+len(press)+len(strain), len(packed))
}

func TestPackRefuses(t *testing.T) {
	if _, err := profilepack.Pack(nil, nil, []float64{1, 2}, []float64{1}, nil); err == nil {
		t.Error("Pack took 2 times and 1 pressure")
	}
}

// TestUnpackRefuses: every change of a packed profile that would make it
// read as other values, or allocate without bound, is refused.
func TestUnpackRefuses(t *testing.T) {
	ts, press, strain := profile(200, 2, 3)
	good, err := profilepack.Pack(nil, nil, ts, press, strain)
	if err != nil {
		t.Fatal(err)
	}
	empty, _ := profilepack.Pack(nil, nil, nil, nil, nil)
	with := func(b []byte, f func([]byte) []byte) []byte { return f(append([]byte(nil), b...)) }
	cases := []struct {
		name string
		src  []byte
	}{
		{"nothing", nil},
		{"header cut short", good[:8]},
		{"another format", with(good, func(b []byte) []byte { b[0] = 2; return b })},
		{"a point more", with(good, func(b []byte) []byte { binary.BigEndian.PutUint32(b[1:], 201); return b })},
		{"a point fewer", with(good, func(b []byte) []byte { binary.BigEndian.PutUint32(b[1:], 199); return b })},
		{"a strain value more", with(good, func(b []byte) []byte { binary.BigEndian.PutUint32(b[5:], 401); return b })},
		{"block cut short", good[:len(good)-1]},
		{"a byte after the block", append(append([]byte(nil), good...), 0)},
		{"no block for values", good[:9]},
		{"a block for no values", append(append([]byte(nil), empty...), 0)},
		{"counts beyond what this block holds", with(good[:12], func(b []byte) []byte {
			binary.BigEndian.PutUint32(b[1:], 1_000_000)
			return b
		})},
		{"counts beyond any block", with(good[:12], func(b []byte) []byte {
			binary.BigEndian.PutUint32(b[1:], math.MaxUint32)
			binary.BigEndian.PutUint32(b[5:], math.MaxUint32)
			return b
		})},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			u, _, _, err := profilepack.Unpack(tc.src, nil, nil)
			if !errors.Is(err, profilepack.ErrNotPacked) {
				t.Errorf("Unpack = %d points, %d values, %v; want ErrNotPacked", u.N, u.M, err)
			}
		})
	}
}

// FuzzUnpack: Unpack never panics, never allocates more than a bounded
// multiple of its input, and what it reads packs and unpacks to the same
// values.
func FuzzUnpack(f *testing.F) {
	ts, press, strain := profile(50, 2, 5)
	good, _ := profilepack.Pack(nil, nil, ts, press, strain)
	f.Add(good)
	one, _ := profilepack.Pack(nil, nil, []float64{0}, []float64{1}, nil)
	f.Add(one)
	f.Add([]byte{1, 0, 0, 0, 0, 0, 0, 0, 0})
	f.Fuzz(func(t *testing.T, src []byte) {
		u, _, _, err := profilepack.Unpack(src, nil, nil)
		if err != nil {
			if !errors.Is(err, profilepack.ErrNotPacked) {
				t.Fatalf("error not ErrNotPacked: %v", err)
			}
			return
		}
		if len(u.Values) > 256*len(src)+64 {
			t.Fatalf("%d bytes of values from %d bytes", len(u.Values), len(src))
		}
		vals := u.Float(nil, 0, 2*u.N+u.M)
		again, err := profilepack.Pack(nil, nil, vals[:u.N], vals[u.N:2*u.N], vals[2*u.N:])
		if err != nil {
			t.Fatal(err)
		}
		v, _, _, err := profilepack.Unpack(again, nil, nil)
		if err != nil {
			t.Fatal(err)
		}
		if v.N != u.N || v.M != u.M || !bytes.Equal(v.Values, u.Values) {
			t.Fatal("packed again, the values differ")
		}
	})
}

// BenchmarkUnpack reads a dive of 1 000 points and 3 gauges, as verify
// does for every stored profile; bytes per second are of the values.
func BenchmarkUnpack(b *testing.B) {
	ts, press, strain := profile(1000, 3, 7)
	packed, _ := profilepack.Pack(nil, nil, ts, press, strain)
	var scratch, planes []byte
	b.SetBytes(int64(8 * (len(ts) + len(press) + len(strain))))
	for b.Loop() {
		var err error
		if _, scratch, planes, err = profilepack.Unpack(packed, scratch, planes); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkPack packs the same dive, as every logged dive does.
func BenchmarkPack(b *testing.B) {
	ts, press, strain := profile(1000, 3, 7)
	var c profilepack.Packer
	var dst []byte
	b.SetBytes(int64(8 * (len(ts) + len(press) + len(strain))))
	for b.Loop() {
		var err error
		if dst, err = profilepack.Pack(dst[:0], &c, ts, press, strain); err != nil {
			b.Fatal(err)
		}
	}
}
