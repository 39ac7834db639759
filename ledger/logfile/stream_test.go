package logfile

import (
	"context"
	"fmt"
	"io"
	"math/rand/v2"
	"reflect"
	"strings"
	"testing"
	"time"

	"hulltally/ledger/blocks"
)

// readBoth reads a samples file block by block, sequentially (workers 0) or
// through a Stream, and returns copies of the blocks and the final error.
func readBoth(src string, per, workers int) ([]blocks.Block, int64, error) {
	start := time.Unix(1700000000, 0)
	maxT := time.Date(2100, 1, 1, 0, 0, 0, 0, time.UTC)
	sr, err := NewSampleReader(strings.NewReader(src), "f", SampleOptions{Start: &start, BlockSamples: per, MaxTime: maxT})
	if err != nil {
		return nil, 0, err
	}
	var out []blocks.Block
	keep := func(b *blocks.Block) {
		c := blocks.Block{TimeNS: append([]int64{}, b.TimeNS...)}
		for _, col := range b.Cols {
			c.Cols = append(c.Cols, blocks.Column{Mant: append([]int64{}, col.Mant...), Scale: append([]uint8{}, col.Scale...), Value: append([]float64{}, col.Value...)})
		}
		out = append(out, c)
	}
	if workers == 0 {
		b := sr.NewBlock()
		for {
			if err = sr.ReadBlock(b); err != nil {
				break
			}
			keep(b)
		}
		return out, sr.Rows(), err
	}
	s := sr.Stream(context.Background(), workers)
	defer s.Close()
	for {
		b, err := s.Next()
		if err != nil {
			return out, sr.Rows(), err
		}
		keep(b)
	}
}

// sameAsSequential fails unless the stream over 1, 2 and 3 workers gives
// the blocks, row count and error (message, line and column) that reading
// block by block gives.
func sameAsSequential(t *testing.T, src string, per int) {
	t.Helper()
	want, wrows, werr := readBoth(src, per, 0)
	for _, w := range []int{1, 2, 3} {
		got, grows, gerr := readBoth(src, per, w)
		if fmt.Sprint(gerr) != fmt.Sprint(werr) {
			t.Fatalf("%d workers, blocks of %d: error %v, reading block by block %v", w, per, gerr, werr)
		}
		if werr == io.EOF && (!reflect.DeepEqual(got, want) || grows != wrows) {
			t.Fatalf("%d workers, blocks of %d: %d blocks (%d rows), reading block by block %d (%d rows)", w, per, len(got), grows, len(want), wrows)
		}
	}
}

// The adversarial cases for a parse split over goroutines are the ones
// at the seams: a time going backwards or repeated across two blocks
// (which no worker sees), on the first line of a block before or after
// another bad field, a bad line right after a block boundary, comments
// and blank lines at boundaries, a file ending on a boundary, a header
// with no rows, and a time column that is not the first.
func TestStreamMatchesReadBlock(t *testing.T) {
	rows := func(ts ...string) string {
		var b strings.Builder
		b.WriteString("time,depth_m,strain_a_ue\n")
		for i, s := range ts {
			fmt.Fprintf(&b, "%s,%d,%d\n", s, i, -i)
		}
		return b.String()
	}
	tm := func(s int) string { return time.Unix(1700000000+int64(s), 0).UTC().Format(time.RFC3339) }
	cases := map[string]string{
		"clean":                        rows(tm(0), tm(1), tm(2), tm(3), tm(4), tm(5), tm(6)),
		"ends on a boundary":           rows(tm(0), tm(1), tm(2), tm(3), tm(4), tm(5)),
		"backwards across a boundary":  rows(tm(0), tm(1), tm(5), tm(4), tm(6), tm(7)),
		"repeated across a boundary":   rows(tm(0), tm(1), tm(2), tm(2), tm(3), tm(4)),
		"backwards inside a block":     rows(tm(0), tm(2), tm(1), tm(3)),
		"header only":                  "time,depth_m\n# nothing\n\n",
		"bad value after a boundary":   rows(tm(0), tm(1), tm(2)) + tm(3) + ",x,1\n",
		"backwards then a bad value":   rows(tm(0), tm(1), tm(5)) + tm(3) + ",1,x\n",
		"bad depth before the time":    "depth_m,time\n1," + tm(0) + "\n2," + tm(1) + "\n3," + tm(2) + "\nx," + tm(1) + "\n",
		"backwards, time column last":  "depth_m,time\n1," + tm(0) + "\n2," + tm(1) + "\n3," + tm(2) + "\n4," + tm(1) + "\n",
		"comments at the boundaries":   "time,depth_m\n# c\n" + tm(0) + ",1\n\n" + tm(1) + ",2\n# c\n" + tm(2) + ",3\n\n# c\n" + tm(3) + ",4\n",
		"too few fields at a boundary": rows(tm(0), tm(1), tm(2)) + tm(3) + "\n",
		"a long line":                  rows(tm(0), tm(1), tm(2)) + strings.Repeat("9", maxLine+10) + "\n",
		"a NUL byte":                   rows(tm(0), tm(1), tm(2), tm(3)) + tm(9) + ",1\x00,2\n",
	}
	for name, src := range cases {
		t.Run(name, func(t *testing.T) {
			for _, per := range []int{1, 2, 3, 5, 100} {
				sameAsSequential(t, src, per)
			}
		})
	}
	// Random files of many blocks, some with one fault somewhere.
	r := rand.New(rand.NewPCG(3, 4))
	for i := range 200 {
		n := 1 + r.IntN(60)
		var b strings.Builder
		b.WriteString("time,pressure_bar,strain_a_ue,temp_c\n")
		s := 0
		bad := r.IntN(3 * n) // beyond n: no fault
		for k := range n {
			s += 1 + r.IntN(3)
			switch {
			case k == bad && r.IntN(2) == 0:
				s -= 2 + r.IntN(3)
				fmt.Fprintf(&b, "%s,%d.%d,%d,12.5\n", tm(s), k, r.IntN(10), -k)
			case k == bad:
				fmt.Fprintf(&b, "%s,%d,zz,12.5\n", tm(s), k)
			default:
				fmt.Fprintf(&b, "%s,%d.%d,%d,12.5\n", tm(s), k, r.IntN(10), -k)
			}
		}
		sameAsSequential(t, b.String(), 1+r.IntN(7))
		if t.Failed() {
			t.Fatalf("file %d", i)
		}
	}
}

// FuzzStreamMatchesReadBlock: for any input the parallel parse gives what
// the sequential one gives.
func FuzzStreamMatchesReadBlock(f *testing.F) {
	f.Add("time,depth_m,strain_a_ue\n2026-05-01T00:00:00Z,1,2\n2026-05-01T00:00:01Z,3,4\n2026-05-01T00:00:00Z,3,4\n", 2)
	f.Add("t_s,pressure_bar,temp_c\n0,1,2\n0.5,1e2,3\n0.5,1,1\n", 1)
	f.Add("depth_m,t_s\n1,0\n2,1\nx,0\n", 2)
	f.Add("time,depth_m\n", 3)
	f.Fuzz(func(t *testing.T, src string, per int) {
		if per < 1 || per > 64 {
			per = 1 + (per&63+64)%64
		}
		sameAsSequential(t, src, per)
	})
}
