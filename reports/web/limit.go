package web

import (
	"net"
	"net/http"
	"sync"
	"time"

	"golang.org/x/time/rate"
)

// failures throttles failed sign-ins per client address: each address may
// fail burst times at once, then once per every; past that its requests
// are refused (429) before any token is looked at, so a token cannot be
// guessed at speed. Successful requests cost nothing. The table is
// bounded: past max addresses it is cleared (an attacker rotating
// addresses then starts again at burst, which a proxy's own limits must
// cover).
type failures struct {
	mu    sync.Mutex
	every time.Duration
	burst int
	max   int
	by    map[string]*rate.Limiter
}

func newFailures(every time.Duration, burst, max int) *failures {
	return &failures{every: every, burst: burst, max: max, by: map[string]*rate.Limiter{}}
}

// client is the address a request comes from (its port left out).
func client(r *http.Request) string {
	host, _, err := net.SplitHostPort(r.RemoteAddr)
	if err != nil {
		return r.RemoteAddr
	}
	return host
}

func (f *failures) limiter(addr string) *rate.Limiter {
	l, ok := f.by[addr]
	if !ok {
		if len(f.by) >= f.max {
			clear(f.by)
		}
		l = rate.NewLimiter(rate.Every(f.every), f.burst)
		f.by[addr] = l
	}
	return l
}

// blocked says whether the address has used up its failures.
func (f *failures) blocked(addr string) bool {
	f.mu.Lock()
	defer f.mu.Unlock()
	return f.limiter(addr).Tokens() < 1
}

// attempt takes one of the address's failures before a password is
// checked, so that attempts sent at once cannot all pass a check made
// before any of them failed; succeeded gives it back. ok is false when
// the address has none left.
func (f *failures) attempt(addr string) (ok bool, succeeded func()) {
	f.mu.Lock()
	defer f.mu.Unlock()
	r := f.limiter(addr).Reserve()
	if !r.OK() || r.Delay() > 0 {
		r.Cancel()
		return false, nil
	}
	return true, func() {
		f.mu.Lock()
		defer f.mu.Unlock()
		r.Cancel()
	}
}

// failed counts a failed sign-in of the address.
func (f *failures) failed(addr string) {
	f.mu.Lock()
	defer f.mu.Unlock()
	f.limiter(addr).Allow()
}
