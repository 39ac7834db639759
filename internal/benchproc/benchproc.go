// Package benchproc is what hulltally's benchmark commands share: a work
// folder, the hulltally binary built into it, a child process timed with
// its peak resident memory, and min/median/max summaries.
package benchproc

import (
	"bufio"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"syscall"
	"time"
)

// WorkDir makes a temporary folder readable by the database's system
// account (the managed server may run as another user) and returns it
// with its cleanup (a no-op when keep is true).
func WorkDir(prefix string, keep bool) (string, func(), error) {
	dir, err := os.MkdirTemp("", prefix)
	if err != nil {
		return "", nil, err
	}
	if err := os.Chmod(dir, 0o755); err != nil {
		os.RemoveAll(dir)
		return "", nil, err
	}
	if keep {
		return dir, func() {}, nil
	}
	return dir, func() { os.RemoveAll(dir) }, nil
}

// Hulltally returns bin when set, else builds ./cmd/hulltally into dir
// (run from the project root) and returns its path.
func Hulltally(bin, dir string) (string, error) {
	if bin != "" {
		return bin, nil
	}
	bin = filepath.Join(dir, "hulltally")
	if out, err := exec.Command("go", "build", "-o", bin, "./cmd/hulltally").CombinedOutput(); err != nil {
		return "", fmt.Errorf("building hulltally (run from the project root or give -hulltally): %v\n%s", err, out)
	}
	return bin, nil
}

// Measure is one timed child process.
type Measure struct {
	// WallS is the wall time, s; CPUS the child's user and system CPU
	// time, s; RSSKB its peak resident memory, KiB (Linux).
	WallS, CPUS float64
	RSSKB       int64
	// Output is the child's combined output.
	Output []byte
}

// Run runs cmd to its end and measures it; err is the command's own
// (an exit status other than 0 included), with the measure filled.
func Run(cmd *exec.Cmd) (Measure, error) {
	t0 := time.Now()
	out, err := cmd.CombinedOutput()
	m := Measure{WallS: time.Since(t0).Seconds(), Output: out}
	if ps := cmd.ProcessState; ps != nil {
		m.CPUS = (ps.UserTime() + ps.SystemTime()).Seconds()
		if ru, ok := ps.SysUsage().(*syscall.Rusage); ok {
			m.RSSKB = ru.Maxrss // KiB on Linux
		}
	}
	return m, err
}

// Median is the median of v (the mean of the middle two for an even
// count); NaN-free input is assumed.
func Median(v []float64) float64 {
	s := slices.Clone(v)
	slices.Sort(s)
	n := len(s)
	if n%2 == 0 {
		return (s[n/2-1] + s[n/2]) / 2
	}
	return s[n/2]
}

// MinMedMax formats min/median/max of v with format f ("n/a" when empty).
func MinMedMax(v []float64, f string) string {
	if len(v) == 0 {
		return "n/a"
	}
	s := slices.Clone(v)
	slices.Sort(s)
	return fmt.Sprintf(f+"/"+f+"/"+f, s[0], Median(s), s[len(s)-1])
}

// ServeURL reads hulltally serve's log (its standard error) until it says
// where it listens.
func ServeURL(r io.Reader) (string, error) {
	s := bufio.NewScanner(r)
	for s.Scan() {
		var rec struct{ Msg, URL string }
		if json.Unmarshal(s.Bytes(), &rec) == nil && rec.Msg == "serving" {
			return rec.URL, nil
		}
	}
	return "", errors.New("hulltally serve stopped before it said where it listens")
}
