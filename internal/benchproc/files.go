package benchproc

import (
	"io"
	"os"

	"hulltally/ledger/synth"
)

// WriteDive writes a benchmark dive (synth.BenchFile: hours at hz with
// gauges strain gauges and sensor noise, from seed) to file and returns
// its rows.
func WriteDive(file string, hours, hz float64, gauges int, seed uint64) (int, error) {
	f, err := os.Create(file)
	if err != nil {
		return 0, err
	}
	rows, err := synth.BenchFile(f, hours, hz, gauges, seed)
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	return rows, err
}

// Warm reads a file once, so that every side of a benchmark starts from
// the page cache.
func Warm(file string) error {
	f, err := os.Open(file)
	if err != nil {
		return err
	}
	defer f.Close()
	_, err = io.Copy(io.Discard, f)
	return err
}
