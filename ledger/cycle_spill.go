package ledger

import (
	"bufio"
	"encoding/binary"
	"fmt"
	"math"
	"os"

	"hulltally/fatigue/rainflow"
)

// cyclePart is the most cycles of one series a dive's count holds in
// memory: past it, the series' cycles so far go to the spill file as one
// part and are stored as one chunk row. 32 768 cycles are 768 KiB; a dive
// with fewer per series (every dive but long, noisy records) never
// touches the disk.
const cyclePart = 1 << 15

// cycleBytes is one spilled cycle: range, mean and count as float64.
const cycleBytes = 24

// spillPart is where one part of a series is in the spill file.
type spillPart struct {
	off int64
	n   int
}

// cycleSpill holds the counted cycles of a long dive on disk while it is
// being stored, so that memory does not grow with the record: parts are
// appended as they are counted and read back, one at a time, to be
// stored, summed and hashed. The file is unlinked as soon as it is made
// (nothing is left behind, whatever happens) and is made only when a
// first part is spilled. A nil *cycleSpill holds nothing.
type cycleSpill struct {
	f   *os.File
	w   *bufio.Writer
	off int64
	buf []byte
	cs  []rainflow.Cycle
	err error
}

// put appends a part and returns where it is. After an error every call
// fails with it.
func (sp *cycleSpill) put(cs []rainflow.Cycle) (spillPart, error) {
	if sp.err != nil {
		return spillPart{}, sp.err
	}
	if sp.f == nil {
		f, err := os.CreateTemp("", "hulltally-cycles-*")
		if err != nil {
			sp.err = fmt.Errorf("spilling counted cycles: %w", err)
			return spillPart{}, sp.err
		}
		os.Remove(f.Name())
		sp.f, sp.w = f, bufio.NewWriterSize(f, 1<<16)
	}
	var b [cycleBytes]byte
	for _, c := range cs {
		binary.LittleEndian.PutUint64(b[0:], math.Float64bits(c.Range))
		binary.LittleEndian.PutUint64(b[8:], math.Float64bits(c.Mean))
		binary.LittleEndian.PutUint64(b[16:], math.Float64bits(c.Count))
		if _, err := sp.w.Write(b[:]); err != nil {
			sp.err = fmt.Errorf("spilling counted cycles: %w", err)
			return spillPart{}, sp.err
		}
	}
	p := spillPart{off: sp.off, n: len(cs)}
	sp.off += int64(len(cs)) * cycleBytes
	return p, nil
}

// read returns a spilled part; the slice is reused by the next read.
func (sp *cycleSpill) read(p spillPart) ([]rainflow.Cycle, error) {
	if sp == nil || sp.f == nil {
		return nil, fmt.Errorf("reading spilled cycles: no spill file")
	}
	if sp.err != nil {
		return nil, sp.err
	}
	if err := sp.w.Flush(); err != nil {
		sp.err = fmt.Errorf("spilling counted cycles: %w", err)
		return nil, sp.err
	}
	size := p.n * cycleBytes
	if cap(sp.buf) < size {
		sp.buf = make([]byte, size)
	}
	b := sp.buf[:size]
	if _, err := sp.f.ReadAt(b, p.off); err != nil {
		return nil, fmt.Errorf("reading spilled cycles back: %w", err)
	}
	cs := sp.cs[:0]
	for i := 0; i < len(b); i += cycleBytes {
		cs = append(cs, rainflow.Cycle{
			Range: math.Float64frombits(binary.LittleEndian.Uint64(b[i:])),
			Mean:  math.Float64frombits(binary.LittleEndian.Uint64(b[i+8:])),
			Count: math.Float64frombits(binary.LittleEndian.Uint64(b[i+16:])),
		})
	}
	sp.cs = cs
	return cs, nil
}

// Close removes the spill (its file was unlinked when made).
func (sp *cycleSpill) Close() error {
	if sp == nil || sp.f == nil {
		return nil
	}
	return sp.f.Close()
}
