// Package web is hulltally's HTTP service: a JSON API under /api/v1 (with
// its OpenAPI 3 description at /api/v1/openapi.json), health and
// readiness, and Prometheus metrics. Every request under /api/v1 is
// authenticated by a personal bearer token and runs inside the database
// as the token's person (ledger.As: SET ROLE), so PostgreSQL's grants, not
// this package, decide what the person may do; reads come from the same
// views as the command line and the PDFs.
package web

import (
	"context"
	_ "embed"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"log/slog"
	"math"
	"mime"
	"mime/multipart"
	"net/http"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"sync"
	"sync/atomic"
	"time"
	"unicode"
	"unicode/utf8"

	"github.com/prometheus/client_golang/prometheus"
	"github.com/prometheus/client_golang/prometheus/collectors"
	"github.com/prometheus/client_golang/prometheus/promhttp"
	"golang.org/x/sync/singleflight"

	"hulltally/ledger"
	"hulltally/reports"
	"hulltally/reports/sign"
	"hulltally/reports/view"
)

//go:embed openapi.json
var openAPI []byte

// Options tune the service.
type Options struct {
	// MaxUploadBytes bounds one dive upload (samples and hits together).
	MaxUploadBytes int64
	// PoolPerPerson bounds the connections opened for one person.
	PoolPerPerson int32
	// TempDir is where uploads are spooled (empty: the system's).
	TempDir string
	// FailEvery and FailBurst throttle failed sign-ins per client address:
	// FailBurst failures at once, then one per FailEvery (defaults: 10,
	// then one a minute).
	FailEvery time.Duration
	FailBurst int
	// MaxIngests bounds the dives being logged at once (default 2): each
	// ingest holds its parse slots and counters, so the service's memory is
	// bounded by this, not by the uploads in flight; an upload waits,
	// spooled to disk, for its turn.
	MaxIngests int
	// SweepEvery is how often the people's connection pools are checked:
	// the pool of a person who can no longer sign in (disabled) is closed
	// (default a minute). Their new requests are refused at once anyway.
	SweepEvery time.Duration
	// StallTimeout cuts off an upload whose sender sends nothing for this
	// long (default a minute): it would otherwise hold its turn and its
	// database connection until the read timeout.
	StallTimeout time.Duration
	// Signer signs the reports the service writes, and reports uploaded to
	// be verified must carry its signature; nil: unsigned reports, checked
	// against the ledger only.
	Signer *sign.Signer
}

// Server serves the API. Make it with New; Close it after the HTTP
// server has shut down.
type Server struct {
	owner *ledger.Ledger
	opt   Options
	log   *slog.Logger
	mux   *http.ServeMux
	reg   *prometheus.Registry

	mu     sync.Mutex
	people map[string]*ledger.Ledger
	// running are the person's requests in progress, to end them when the
	// person can no longer sign in (sweep).
	running map[string]map[*request]struct{}
	// opening opens each person's pool once, outside mu.
	opening singleflight.Group
	// pages are the web pages' templates.
	pages *pages
	// signIns bounds the sign-ins checked at once (each opens a database
	// connection).
	signIns chan struct{}
	fails   *failures
	// ingests holds a token per dive being logged (Options.MaxIngests).
	ingests chan struct{}
	// stop ends the sweeper; swept is closed when it has.
	stop, swept chan struct{}

	requests *prometheus.CounterVec
	latency  *prometheus.HistogramVec
	dives    prometheus.Counter
	ingest   prometheus.Counter
	badAuth  prometheus.Counter
}

// New makes the service over the owner's ledger (the connection the
// service signs in with, which must be able to SET ROLE to each person).
func New(owner *ledger.Ledger, opt Options, log *slog.Logger) *Server {
	if opt.PoolPerPerson < 1 {
		opt.PoolPerPerson = 2
	}
	if opt.FailEvery <= 0 {
		opt.FailEvery = time.Minute
	}
	if opt.FailBurst < 1 {
		opt.FailBurst = 10
	}
	if opt.MaxIngests < 1 {
		opt.MaxIngests = 2
	}
	if opt.SweepEvery <= 0 {
		opt.SweepEvery = time.Minute
	}
	if opt.StallTimeout <= 0 {
		opt.StallTimeout = time.Minute
	}
	s := &Server{owner: owner, opt: opt, log: log, mux: http.NewServeMux(), reg: prometheus.NewRegistry(), people: map[string]*ledger.Ledger{},
		running: map[string]map[*request]struct{}{}, signIns: make(chan struct{}, 4),
		fails: newFailures(opt.FailEvery, opt.FailBurst, 100000), ingests: make(chan struct{}, opt.MaxIngests),
		stop: make(chan struct{}), swept: make(chan struct{})}
	s.requests = prometheus.NewCounterVec(prometheus.CounterOpts{Name: "hulltally_http_requests_total", Help: "HTTP requests by route and status code."}, []string{"route", "code"})
	s.latency = prometheus.NewHistogramVec(prometheus.HistogramOpts{Name: "hulltally_http_request_seconds", Help: "HTTP request latency by route.", Buckets: prometheus.ExponentialBuckets(0.002, 2, 14)}, []string{"route"})
	s.dives = prometheus.NewCounter(prometheus.CounterOpts{Name: "hulltally_dives_logged_total", Help: "Dives logged through the service (duplicates not counted)."})
	s.ingest = prometheus.NewCounter(prometheus.CounterOpts{Name: "hulltally_ingest_bytes_total", Help: "Bytes of dive files received."})
	s.badAuth = prometheus.NewCounter(prometheus.CounterOpts{Name: "hulltally_auth_failures_total", Help: "Requests refused for a missing or invalid token."})
	s.reg.MustRegister(s.requests, s.latency, s.dives, s.ingest, s.badAuth, collectors.NewGoCollector(), collectors.NewProcessCollector(collectors.ProcessCollectorOpts{}))

	s.handle("GET /healthz", false, s.healthz)
	s.handle("GET /readyz", false, s.readyz)
	s.mux.Handle("GET /metrics", promhttp.HandlerFor(s.reg, promhttp.HandlerOpts{}))
	s.handle("GET /api/v1/openapi.json", false, s.openapi)
	for _, r := range apiRoutes(s) {
		s.handle(r.pattern, true, r.h)
	}
	pg, err := loadPages()
	if err != nil {
		panic(fmt.Sprintf("web: the embedded page templates: %v", err)) // a build defect: TestPages parses them
	}
	s.pages = pg
	s.routePages()
	go s.sweep()
	return s
}

// sweep closes, every SweepEvery, the pools of people who can no longer
// sign in, until Close.
func (s *Server) sweep() {
	defer close(s.swept)
	t := time.NewTicker(s.opt.SweepEvery)
	defer t.Stop()
	for {
		select {
		case <-s.stop:
			return
		case <-t.C:
		}
		s.mu.Lock()
		names := make([]string, 0, len(s.people))
		for n := range s.people {
			names = append(names, n)
		}
		s.mu.Unlock()
		if len(names) == 0 {
			continue
		}
		ctx, cancel := context.WithTimeout(context.Background(), 10*time.Second)
		var gone []string
		err := s.owner.Pool().QueryRow(ctx, `SELECT coalesce(array_agg(n), '{}') FROM unnest($1::text[]) n
			WHERE NOT EXISTS (SELECT 1 FROM pg_roles r WHERE r.rolname = n AND r.rolcanlogin)`, names).Scan(&gone)
		cancel()
		if err != nil {
			s.log.Warn("checking the people's connections", "error", err.Error())
			continue
		}
		for _, n := range gone {
			s.mu.Lock()
			l, ok := s.people[n]
			delete(s.people, n)
			for q := range s.running[n] {
				q.cancel(errPersonGone) // rolled back: nothing of it is stored
			}
			s.mu.Unlock()
			if ok {
				l.Close() // waits for requests in progress to give back their connections
				s.log.Info("closed the connections of a person who can no longer sign in", "person", n)
			}
		}
	}
}

// errPersonGone ends the requests of a person who can no longer sign in.
var errPersonGone = errors.New("the person can no longer sign in")

// request is a person's request in progress.
type request struct{ cancel context.CancelCauseFunc }

// track registers a person's request in progress, so that the sweep can
// end it when the person is disabled (a read of its body in progress is
// cut too); it returns the request with its context, and its release.
func (s *Server) track(w http.ResponseWriter, r *http.Request, person string) (*http.Request, func()) {
	ctx, cancel := context.WithCancelCause(r.Context())
	q := &request{cancel: cancel}
	rc := http.NewResponseController(w)
	stop := context.AfterFunc(ctx, func() {
		if errors.Is(context.Cause(ctx), errPersonGone) {
			_ = rc.SetReadDeadline(time.Now())
		}
	})
	s.mu.Lock()
	if s.running[person] == nil {
		s.running[person] = map[*request]struct{}{}
	}
	s.running[person][q] = struct{}{}
	s.mu.Unlock()
	return r.WithContext(ctx), func() {
		s.mu.Lock()
		delete(s.running[person], q)
		if len(s.running[person]) == 0 {
			delete(s.running, person)
		}
		s.mu.Unlock()
		stop()
		cancel(nil)
	}
}

// route is one authenticated API route.
type route struct {
	pattern string
	h       handlerFunc
}

// apiRoutes are the authenticated routes; the OpenAPI document must
// describe exactly these (TestOpenAPIDescribesEveryRoute).
func apiRoutes(s *Server) []route {
	return []route{
		{"GET /api/v1/me", s.me},
		{"GET /api/v1/fleet", s.fleet},
		{"GET /api/v1/hulls", s.hulls},
		{"GET /api/v1/hulls/{serial}", s.hull},
		{"GET /api/v1/hulls/{serial}/dives", s.hullDives},
		{"GET /api/v1/dives/{id}", s.dive},
		{"GET /api/v1/hulls/{serial}/clearance", s.clearance},
		{"POST /api/v1/hulls/{serial}/dives", s.logDive},
		{"POST /api/v1/hulls/{serial}/inspections", s.inspection},
		{"POST /api/v1/hulls/{serial}/proof-tests", s.proofTest},
		{"POST /api/v1/hulls/{serial}/decisions", s.decision},
		{"GET /api/v1/hulls/{serial}/report", s.report(reports.KindHull)},
		{"GET /api/v1/dives/{id}/report", s.report(reports.KindDive)},
		{"GET /api/v1/fleet/report", s.report(reports.KindFleet)},
		{"POST /api/v1/reports/verify", s.verifyReport},
		{"GET /api/v1/verify", s.verify},
	}
}

// Handler is the service's HTTP handler.
func (s *Server) Handler() http.Handler { return s.mux }

// Close closes the people's connections.
func (s *Server) Close() {
	close(s.stop)
	<-s.swept
	s.mu.Lock()
	defer s.mu.Unlock()
	for k, l := range s.people {
		l.Close()
		delete(s.people, k)
	}
}

// handlerFunc handles a request as a person's ledger (nil for the routes
// without a person) and returns the status and the JSON body, or an error.
type handlerFunc func(w http.ResponseWriter, r *http.Request, l *ledger.Ledger) (int, any, error)

func (s *Server) handle(pattern string, auth bool, h handlerFunc) {
	routeName := pattern
	s.mux.HandleFunc(pattern, func(w http.ResponseWriter, r *http.Request) {
		start := time.Now()
		code := s.serve(w, r, auth, h)
		s.requests.WithLabelValues(routeName, strconv.Itoa(code)).Inc()
		s.latency.WithLabelValues(routeName).Observe(time.Since(start).Seconds())
	})
}

// serve runs one request and writes its answer; it returns the status.
func (s *Server) serve(w http.ResponseWriter, r *http.Request, auth bool, h handlerFunc) int {
	var l *ledger.Ledger
	person := ""
	if auth {
		addr := client(r)
		if s.fails.blocked(addr) {
			s.badAuth.Inc()
			s.log.Warn("refused: too many failed sign-ins", "remote", addr, "route", r.Pattern)
			w.Header().Set("Retry-After", strconv.Itoa(int(s.opt.FailEvery.Seconds())))
			return writeJSON(w, http.StatusTooManyRequests, errorDoc("unauthenticated", "too many failed sign-ins from this address; wait and try again"))
		}
		if r.Method == http.MethodHead {
			// ServeMux lets HEAD through a GET route; an API read may
			// record (a report is registered) or cost (a verify): no.
			w.Header().Set("Allow", "GET")
			return writeJSON(w, http.StatusMethodNotAllowed, errorDoc("input", "HEAD is not served under /api/v1; use GET"))
		}
		var err error
		person, l, err = s.authenticate(r)
		if err != nil && !errors.Is(err, ledger.ErrBadToken) {
			// The database, not the token: not a failed sign-in.
			s.log.Error("authentication could not be checked", "remote", addr, "route", r.Pattern, "error", err.Error())
			return writeJSON(w, http.StatusServiceUnavailable, errorDoc("failure", "the service cannot check tokens now (see its log); try again"))
		}
		if err != nil {
			s.fails.failed(addr)
			s.badAuth.Inc()
			// Never the token itself, in the log or the answer.
			s.log.Warn("refused: authentication", "remote", r.RemoteAddr, "route", r.Pattern, "reason", err.Error())
			w.Header().Set("WWW-Authenticate", `Bearer realm="hulltally"`)
			return writeJSON(w, http.StatusUnauthorized, errorDoc("unauthenticated", "a valid bearer token is required (hulltally token create)"))
		}
	}
	if person != "" {
		var done func()
		r, done = s.track(w, r, person)
		defer done()
	}
	code, body, err := h(w, r, l)
	if err != nil {
		if errors.Is(context.Cause(r.Context()), errPersonGone) {
			err = fmt.Errorf("%w: %w", errPersonGone, err)
		}
		code, body = s.errorAnswer(err, l)
		level := slog.LevelInfo
		if code >= 500 {
			level = slog.LevelError
		}
		s.log.Log(r.Context(), level, "request failed", "route", r.Pattern, "person", person, "code", code, "error", err.Error())
	}
	if code == 0 {
		return http.StatusOK // the handler wrote the answer itself
	}
	return writeJSON(w, code, body)
}

// authenticate finds the bearer token's person and their ledger.
func (s *Server) authenticate(r *http.Request) (string, *ledger.Ledger, error) {
	h := r.Header.Get("Authorization")
	scheme, token, ok := strings.Cut(h, " ")
	if !ok || !strings.EqualFold(scheme, "Bearer") || token == "" {
		return "", nil, fmt.Errorf("no bearer token: %w", ledger.ErrBadToken)
	}
	person, err := s.owner.Authenticate(r.Context(), strings.TrimSpace(token), time.Now().UTC())
	if err != nil {
		return "", nil, err
	}
	l, err := s.ledgerOf(r.Context(), person)
	return person, l, err
}

// ledgerOf is the person's ledger, opened once. The lock is not held
// while a pool opens (a slow database would hold up every person's
// requests); concurrent first requests of one person share one opening.
func (s *Server) ledgerOf(ctx context.Context, person string) (*ledger.Ledger, error) {
	s.mu.Lock()
	l, ok := s.people[person]
	s.mu.Unlock()
	if ok {
		return l, nil
	}
	v, err, _ := s.opening.Do(person, func() (any, error) {
		// Not the first caller's cancellation: the others wait on it too.
		octx, cancel := context.WithTimeout(context.WithoutCancel(ctx), 30*time.Second)
		defer cancel()
		l, err := s.owner.As(octx, person, s.opt.PoolPerPerson)
		if err != nil {
			return nil, err
		}
		s.mu.Lock()
		defer s.mu.Unlock()
		if had, ok := s.people[person]; ok {
			l.Close()
			return had, nil
		}
		s.people[person] = l
		return l, nil
	})
	if err != nil {
		return nil, err
	}
	return v.(*ledger.Ledger), nil
}

// errorAnswer maps an error to a status and an error document: the same
// classes as the command line's exit codes.
func (s *Server) errorAnswer(err error, l *ledger.Ledger) (int, any) {
	var ie *ledger.InputError
	var tooBig *http.MaxBytesError
	switch {
	case ledger.IsNotPermitted(err):
		id := ledger.Identity{}
		if l != nil {
			id = l.Identity()
		}
		var np *ledger.NotPermittedError
		if !errors.As(err, &np) {
			np = &ledger.NotPermittedError{Identity: id, Err: err}
		}
		return http.StatusForbidden, errorDoc("not_permitted", np.Error())
	case errors.As(err, &tooBig):
		return http.StatusRequestEntityTooLarge, errorDoc("input", fmt.Sprintf("the upload is larger than the limit of %d bytes; nothing was stored", tooBig.Limit))
	case errors.Is(err, ledger.ErrUnknownHull), errors.Is(err, ledger.ErrUnknownDive):
		return http.StatusNotFound, errorDoc("input", err.Error())
	case errors.As(err, &ie):
		return http.StatusUnprocessableEntity, errorDoc("input", err.Error())
	case errors.Is(err, errPersonGone):
		return http.StatusUnauthorized, errorDoc("unauthenticated", "the person can no longer sign in (disabled): the request was ended and nothing of it was stored")
	case errors.Is(err, context.Canceled), errors.Is(err, context.DeadlineExceeded):
		return http.StatusServiceUnavailable, errorDoc("failure", "the request was cancelled or timed out; nothing was stored")
	}
	return http.StatusInternalServerError, errorDoc("failure", "the service could not do it (see its log)")
}

func errorDoc(kind, msg string) map[string]any {
	return map[string]any{"error": map[string]string{"kind": kind, "message": msg}}
}

func writeJSON(w http.ResponseWriter, code int, body any) int {
	w.Header().Set("Content-Type", "application/json")
	w.Header().Set("Cache-Control", "no-store")
	w.WriteHeader(code)
	_ = json.NewEncoder(w).Encode(body)
	return code
}

func (s *Server) healthz(http.ResponseWriter, *http.Request, *ledger.Ledger) (int, any, error) {
	return http.StatusOK, map[string]string{"status": "ok"}, nil
}

func (s *Server) readyz(_ http.ResponseWriter, r *http.Request, _ *ledger.Ledger) (int, any, error) {
	ctx, cancel := context.WithTimeout(r.Context(), 2*time.Second)
	defer cancel()
	if err := s.owner.Pool().Ping(ctx); err != nil {
		return http.StatusServiceUnavailable, map[string]string{"status": "database unavailable"}, nil
	}
	return http.StatusOK, map[string]string{"status": "ready"}, nil
}

func (s *Server) openapi(w http.ResponseWriter, _ *http.Request, _ *ledger.Ledger) (int, any, error) {
	w.Header().Set("Content-Type", "application/json")
	w.WriteHeader(http.StatusOK)
	_, _ = w.Write(openAPI)
	return 0, nil, nil
}

func (s *Server) me(_ http.ResponseWriter, _ *http.Request, l *ledger.Ledger) (int, any, error) {
	return http.StatusOK, l.Identity(), nil
}

func (s *Server) fleet(_ http.ResponseWriter, r *http.Request, l *ledger.Ledger) (int, any, error) {
	rows, err := view.FleetRowsOf(r.Context(), l, time.Now().UTC())
	if err != nil {
		return 0, nil, err
	}
	return http.StatusOK, map[string]any{"hulls": rows, "caution": reports.Caution}, nil
}

func (s *Server) hull(_ http.ResponseWriter, r *http.Request, l *ledger.Ledger) (int, any, error) {
	hv, err := view.HullOf(r.Context(), l, r.PathValue("serial"), time.Now().UTC())
	if err != nil {
		return 0, nil, err
	}
	return http.StatusOK, map[string]any{"hull": hv, "caution": reports.Caution}, nil
}

// hulls is the hull list, as `hull list --json` prints it.
func (s *Server) hulls(_ http.ResponseWriter, r *http.Request, l *ledger.Ledger) (int, any, error) {
	rows, err := view.HullRowsOf(r.Context(), l, time.Now().UTC())
	if err != nil {
		return 0, nil, err
	}
	return http.StatusOK, map[string]any{"hulls": rows, "caution": reports.Caution}, nil
}

// hullDives lists a hull's dives, oldest first, as `dive list --json` prints
// them.
func (s *Server) hullDives(_ http.ResponseWriter, r *http.Request, l *ledger.Ledger) (int, any, error) {
	serial := r.PathValue("serial")
	ds, err := l.Dives(r.Context(), serial)
	if err != nil {
		if errors.Is(err, ledger.ErrUnknownHull) {
			return 0, nil, &ledger.InputError{Err: err}
		}
		return 0, nil, err
	}
	if ds == nil {
		ds = []ledger.Dive{}
	}
	return http.StatusOK, map[string]any{"hull": serial, "dives": ds}, nil
}

// dive is one dive with its load, as `dive show --json` prints it.
func (s *Server) dive(_ http.ResponseWriter, r *http.Request, l *ledger.Ledger) (int, any, error) {
	dv, err := view.DiveOf(r.Context(), l, r.PathValue("id"))
	if err != nil {
		return 0, nil, err
	}
	return http.StatusOK, struct {
		*ledger.Dive
		*ledger.DiveLoad
		Caution string `json:"caution"`
	}{dv.Record, dv.Load, reports.Caution}, nil
}

func (s *Server) clearance(_ http.ResponseWriter, r *http.Request, l *ledger.Ledger) (int, any, error) {
	q := r.URL.Query()
	depth, err := strconv.ParseFloat(q.Get("depth_m"), 64)
	if err != nil || math.IsInf(depth, 0) || math.IsNaN(depth) {
		return 0, nil, &ledger.InputError{Err: fmt.Errorf("depth_m: a planned depth in metres is required")}
	}
	bottom := 0.0
	if v := q.Get("bottom_min"); v != "" {
		if bottom, err = strconv.ParseFloat(v, 64); err != nil || math.IsInf(bottom, 0) || math.IsNaN(bottom) {
			return 0, nil, &ledger.InputError{Err: fmt.Errorf("bottom_min %q: not a number", v)}
		}
	}
	c, err := l.Clear(r.Context(), r.PathValue("serial"), depth, bottom, time.Now().UTC())
	if err != nil {
		return 0, nil, err
	}
	return http.StatusOK, struct {
		*ledger.Clearance
		Caution string `json:"caution"`
	}{c, reports.Caution}, nil
}

func (s *Server) verify(_ http.ResponseWriter, r *http.Request, l *ledger.Ledger) (int, any, error) {
	res, err := l.Verify(r.Context())
	if err != nil {
		return 0, nil, err
	}
	return http.StatusOK, res, nil
}

// logDive takes a multipart upload (fields lat, site, operator, start,
// then the part "samples", with an optional part "hits" before or right
// after it) and logs the dive as the person, all or nothing (readUpload).
func (s *Server) logDive(w http.ResponseWriter, r *http.Request, l *ledger.Ledger) (int, any, error) {
	return s.readUpload(w, r, nil, func(req ledger.LogRequest) (int, any, error) {
		d, err := s.logUploaded(r, l, req)
		if err != nil {
			return 0, nil, err
		}
		if d.Duplicate {
			return http.StatusOK, d, nil
		}
		return http.StatusCreated, d, nil
	})
}

// logUploaded logs an uploaded dive as the person (view.LogDive, the
// command line's answer) and, for a new dive, counts it and writes its
// hull's fleet summary (noteHull).
func (s *Server) logUploaded(r *http.Request, l *ledger.Ledger, req ledger.LogRequest) (*view.Logged, error) {
	d, err := view.LogDive(r.Context(), l, req, time.Now().UTC(), reports.Caution)
	if err != nil {
		return nil, err
	}
	if !d.Duplicate {
		s.dives.Inc()
		s.noteHull(r, d.Hull)
	}
	return d, nil
}

// noteHull writes, as the owner, the fleet summary of a hull a person has
// just written to (ledger.NoteHull): the person may not. A failure leaves
// the hull evaluated from the ledger at every read until the next write
// or fleet rebuild, and is logged.
func (s *Server) noteHull(r *http.Request, serial string) {
	if err := s.owner.NoteHull(r.Context(), serial); err != nil {
		s.log.Warn("writing a hull's fleet summary after a person's write", "hull", serial, "error", err.Error())
	}
}

// readUpload reads a multipart upload of a dive's files and hands the log
// request to store: fields first (lat, site, operator, start, and those
// extra, when not nil, knows), then the part "samples", with an optional part "hits"
// before it or right after it. The samples stream straight into the parse
// (ledger.Upload): nothing waits for the whole upload, and a hits file
// (small) is spooled to disk. A field after the samples is refused (the
// dive's settings must be known before its samples are read); a dropped
// connection, an upload over the limit or a cancelled request stores
// nothing.
func (s *Server) readUpload(w http.ResponseWriter, r *http.Request, extra func(req *ledger.LogRequest, name, value string) (bool, error),
	store func(ledger.LogRequest) (int, any, error)) (int, any, error) {
	r.Body = http.MaxBytesReader(w, r.Body, s.opt.MaxUploadBytes)
	mr, err := r.MultipartReader()
	if err != nil {
		return 0, nil, &ledger.InputError{Err: fmt.Errorf("a multipart/form-data upload with a part \"samples\" is expected: %w", err)}
	}
	dir, err := os.MkdirTemp(s.opt.TempDir, "hulltally-upload-")
	if err != nil {
		return 0, nil, err
	}
	defer os.RemoveAll(dir)
	req := ledger.LogRequest{Hull: r.PathValue("serial")}
	seen := map[string]bool{}
	// spoolHits writes a hits part to the spool folder, once.
	spoolHits := func(p *multipart.Part) (string, error) {
		if seen["hits"] {
			return "", &ledger.InputError{Err: errors.New(`part "hits" given twice`)}
		}
		seen["hits"] = true
		path := filepath.Join(dir, fileName(p.FileName(), "hits.csv"))
		n, err := spool(path, p)
		s.ingest.Add(float64(n))
		if err != nil {
			return "", err
		}
		if n == 0 && p.FileName() == "" {
			// A form's file field left empty (a browser sends it so): no
			// hits file, not an empty one.
			return "", nil
		}
		return path, nil
	}
	for {
		p, err := mr.NextPart()
		if err == io.EOF {
			break
		}
		if err != nil {
			return 0, nil, uploadErr(err)
		}
		name := p.FormName()
		switch name {
		case "hits":
			if req.AE, err = spoolHits(p); err != nil {
				return 0, nil, err
			}
			continue
		case "samples":
			// A sender that stops sending is cut off after StallTimeout
			// (the whole upload stays bounded by the read timeout).
			stalled := s.watchStall(w, r)
			defer stalled.stop()
			// rest reads what follows the samples: a hits file at most,
			// then the end; once (a second call answers the same).
			var restDone bool
			var restHits string
			var restErr error
			rest := func() (string, error) {
				if restDone {
					return restHits, restErr
				}
				restDone = true
				defer stalled.stop() // all is read
				for {
					q, err := mr.NextPart()
					if err == io.EOF {
						return restHits, nil
					}
					if err != nil {
						restErr = uploadErr(err)
						return "", restErr
					}
					if q.FormName() != "hits" {
						restErr = &ledger.InputError{Err: fmt.Errorf("part %q after the samples: the fields come before the part \"samples\", and only \"hits\" may follow it; nothing was stored", q.FormName())}
						return "", restErr
					}
					h, err := spoolHits(q)
					if err != nil {
						restErr = err
						return "", err
					}
					if h != "" {
						restHits = h
					}
				}
			}
			samples := &counted{r: p, c: s.ingest, seen: stalled}
			release, free := s.tryHeavy()
			if free {
				// Streamed straight into the parse.
				defer release()
				req.Upload = &ledger.Upload{Samples: samples, Name: fileName(p.FileName(), "samples.csv"), Rest: rest}
			} else {
				// Every turn is taken: the upload is spooled to disk while
				// it waits, so that a queued sender holds no turn.
				path := filepath.Join(dir, "samples", fileName(p.FileName(), "samples.csv"))
				if err := os.Mkdir(filepath.Dir(path), 0o700); err != nil {
					return 0, nil, err
				}
				if _, err := spool(path, samples); err != nil {
					return 0, nil, err
				}
				hits, err := rest()
				if err != nil {
					return 0, nil, err
				}
				if hits != "" {
					req.AE = hits
				}
				stalled.stop()
				if release, err = s.heavy(r.Context()); err != nil {
					return 0, nil, err
				}
				defer release()
				req.Samples = path
			}
			code, body, err := store(req)
			var ie *ledger.InputError
			var tooBig *http.MaxBytesError
			if errors.As(err, &ie) && !errors.As(err, &tooBig) {
				// The spool folder is the service's business, not the client's.
				err = &ledger.InputError{Err: errors.New(strings.ReplaceAll(err.Error(), dir+string(filepath.Separator), ""))}
			}
			return code, body, err
		}
		if seen[name] {
			return 0, nil, &ledger.InputError{Err: fmt.Errorf("part %q given twice", name)}
		}
		seen[name] = true
		v, err := io.ReadAll(io.LimitReader(p, maxField+1))
		if err != nil {
			return 0, nil, uploadErr(err)
		}
		if len(v) > maxField || !utf8.Valid(v) {
			return 0, nil, &ledger.InputError{Err: fmt.Errorf("part %q: at most %d bytes of UTF-8 text", name, maxField)}
		}
		value := strings.TrimSpace(string(v))
		switch name {
		case "lat", "site", "operator", "start":
			err = setField(&req, name, value)
		default:
			known := false
			if extra != nil {
				known, err = extra(&req, name, value)
			}
			if err == nil && !known {
				err = &ledger.InputError{Err: fmt.Errorf("unknown part %q", name)}
			}
		}
		if err != nil {
			return 0, nil, err
		}
	}
	return 0, nil, &ledger.InputError{Err: errors.New("the part \"samples\" (the samples file) is required")}
}

// counted counts the bytes read through it into a metric, and tells the
// stall watch that bytes came.
type counted struct {
	r    io.Reader
	c    prometheus.Counter
	seen *stallWatch
}

func (c *counted) Read(p []byte) (int, error) {
	n, err := c.r.Read(p)
	c.c.Add(float64(n))
	if n > 0 || err != nil {
		c.seen.last.Store(time.Now().UnixNano())
	}
	return n, err
}

// stallWatch cuts off an upload whose sender has sent nothing for
// StallTimeout: it sets the connection's read deadline to now, so the
// read in progress fails and nothing is stored. It only ever brings the
// deadline forward (never past the server's read timeout).
type stallWatch struct {
	last atomic.Int64
	done chan struct{}
	once sync.Once
}

func (s *Server) watchStall(w http.ResponseWriter, r *http.Request) *stallWatch {
	sw := &stallWatch{done: make(chan struct{})}
	sw.last.Store(time.Now().UnixNano())
	rc := http.NewResponseController(w)
	limit := s.opt.StallTimeout
	go func() {
		t := time.NewTicker(min(time.Second, limit/4))
		defer t.Stop()
		for {
			select {
			case <-sw.done:
				return
			case <-r.Context().Done():
				return
			case <-t.C:
				if time.Since(time.Unix(0, sw.last.Load())) > limit {
					s.log.Warn("upload stalled: cut off", "remote", client(r), "path", r.URL.Path, "after", limit.String())
					_ = rc.SetReadDeadline(time.Now())
					return
				}
			}
		}
	}()
	return sw
}

func (sw *stallWatch) stop() { sw.once.Do(func() { close(sw.done) }) }

// tryHeavy takes a turn among the heavy requests if one is free now.
func (s *Server) tryHeavy() (func(), bool) {
	select {
	case s.ingests <- struct{}{}:
		return func() { <-s.ingests }, true
	default:
		return nil, false
	}
}

// spool copies an upload's part into a new private file at path (never
// one that exists): a failure to make the file is the service's, one to
// copy is the upload's (uploadErr). It returns the bytes copied.
func spool(path string, r io.Reader) (int64, error) {
	f, err := os.OpenFile(path, os.O_CREATE|os.O_EXCL|os.O_WRONLY, 0o600)
	if err != nil {
		return 0, err
	}
	n, err := io.Copy(f, r)
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	if err != nil {
		return n, uploadErr(err)
	}
	return n, nil
}

// uploadErr is an error reading the upload: too large, cut off, or
// malformed.
func uploadErr(err error) error {
	var tooBig *http.MaxBytesError
	if errors.As(err, &tooBig) {
		return err
	}
	return &ledger.InputError{Err: fmt.Errorf("reading the upload: %w; nothing was stored", err)}
}

func setField(req *ledger.LogRequest, name, v string) error {
	switch name {
	case "lat":
		f, err := strconv.ParseFloat(v, 64)
		if err != nil {
			return &ledger.InputError{Err: fmt.Errorf("lat %q: not a number", v)}
		}
		req.Latitude = &f
	case "site":
		req.Site = v
	case "operator":
		req.Operator = v
	case "start":
		t, err := time.Parse(time.RFC3339Nano, v)
		if err != nil {
			return &ledger.InputError{Err: fmt.Errorf("start %q: an RFC 3339 time", v)}
		}
		req.Start = &t
	}
	return nil
}

// maxJSON bounds a JSON request body.
const maxJSON = 64 << 10

// readJSON decodes a small JSON object strictly: its keys must be the
// struct's json names exactly (Go's decoder would match them in any letter
// case, and let a repeated key's last value win), none repeated, and
// nothing may follow the object. Anything else is refused, never ignored.
func readJSON(w http.ResponseWriter, r *http.Request, v any, known ...string) error {
	dec := json.NewDecoder(http.MaxBytesReader(w, r.Body, maxJSON))
	bad := func(format string, a ...any) error {
		return &ledger.InputError{Err: fmt.Errorf("the request body: "+format, a...)}
	}
	if t, err := dec.Token(); err != nil || t != json.Delim('{') {
		return bad("a JSON object is expected")
	}
	fields := map[string]json.RawMessage{}
	for dec.More() {
		t, err := dec.Token()
		if err != nil {
			return bad("%v", err)
		}
		key, _ := t.(string)
		if !slices.Contains(known, key) {
			return bad("unknown field %q (known: %s)", key, strings.Join(known, ", "))
		}
		if _, dup := fields[key]; dup {
			return bad("field %q given twice", key)
		}
		var raw json.RawMessage
		if err := dec.Decode(&raw); err != nil {
			return bad("field %q: %v", key, err)
		}
		fields[key] = raw
	}
	if t, err := dec.Token(); err != nil || t != json.Delim('}') {
		return bad("the object is not closed")
	}
	if _, err := dec.Token(); err != io.EOF {
		return bad("something follows the JSON object")
	}
	b, err := json.Marshal(fields)
	if err != nil {
		return err
	}
	if err := json.Unmarshal(b, v); err != nil {
		return bad("%v", err)
	}
	return nil
}

// record is the body of a maintenance record: the actor is never taken
// from it (the person signed in is the actor).
type record struct {
	At          *time.Time `json:"at"`
	Method      string     `json:"method"`
	Result      string     `json:"result"`
	Findings    string     `json:"findings"`
	PressureMPa float64    `json:"pressure_mpa"`
	Notes       string     `json:"notes"`
	Kind        string     `json:"kind"`
	Reason      string     `json:"reason"`
}

func (rec *record) at() time.Time {
	if rec.At == nil {
		return time.Time{}
	}
	return *rec.At
}

func (s *Server) inspection(w http.ResponseWriter, r *http.Request, l *ledger.Ledger) (int, any, error) {
	var rec record
	if err := readJSON(w, r, &rec, "at", "method", "result", "findings"); err != nil {
		return 0, nil, err
	}
	in, err := l.RecordInspection(r.Context(), r.PathValue("serial"), ledger.Inspection{At: rec.at(), Method: rec.Method, Result: rec.Result, Findings: rec.Findings})
	if err != nil {
		return 0, nil, err
	}
	s.noteHull(r, r.PathValue("serial"))
	return http.StatusCreated, in, nil
}

func (s *Server) proofTest(w http.ResponseWriter, r *http.Request, l *ledger.Ledger) (int, any, error) {
	if mt, _, _ := mime.ParseMediaType(r.Header.Get("Content-Type")); mt == "multipart/form-data" {
		return s.proofTestWithSamples(w, r, l)
	}
	var rec record
	if err := readJSON(w, r, &rec, "at", "pressure_mpa", "result", "notes"); err != nil {
		return 0, nil, err
	}
	p, err := l.RecordProofTest(r.Context(), r.PathValue("serial"), ledger.ProofTest{At: rec.at(), PressureMPa: rec.PressureMPa, Result: rec.Result, Notes: rec.Notes})
	if err != nil {
		return 0, nil, err
	}
	s.noteHull(r, r.PathValue("serial"))
	return http.StatusCreated, p, nil
}

// proofTestWithSamples records a proof test with its data-logger files
// (multipart: fields pressure_mpa, result, notes, at, lat, start, then
// samples and hits as for a dive): the samples are logged as a dive of the
// hull in the same transaction, checked against the record, and become
// the strain baseline; all of it is stored, or nothing.
func (s *Server) proofTestWithSamples(w http.ResponseWriter, r *http.Request, l *ledger.Ledger) (int, any, error) {
	var p ledger.ProofTest
	return s.readUpload(w, r, func(req *ledger.LogRequest, name, v string) (bool, error) {
		switch name {
		case "pressure_mpa":
			f, err := strconv.ParseFloat(v, 64)
			if err != nil || math.IsNaN(f) || math.IsInf(f, 0) {
				return true, &ledger.InputError{Err: fmt.Errorf("pressure_mpa %q: not a number", v)}
			}
			p.PressureMPa = f
		case "result":
			p.Result = v
		case "notes":
			p.Notes = v
		case "at":
			t, err := time.Parse(time.RFC3339Nano, v)
			if err != nil {
				return true, &ledger.InputError{Err: fmt.Errorf("at %q: an RFC 3339 time", v)}
			}
			p.At = t
		default:
			return false, nil
		}
		return true, nil
	}, func(req ledger.LogRequest) (int, any, error) {
		if req.Site == "" {
			req.Site = "proof test"
		}
		rec, err := l.ProofTestWithSamples(r.Context(), r.PathValue("serial"), p, req)
		if err != nil {
			return 0, nil, err
		}
		s.noteHull(r, r.PathValue("serial"))
		return http.StatusCreated, rec, nil
	})
}

func (s *Server) decision(w http.ResponseWriter, r *http.Request, l *ledger.Ledger) (int, any, error) {
	var rec record
	if err := readJSON(w, r, &rec, "at", "kind", "reason"); err != nil {
		return 0, nil, err
	}
	d, err := l.RecordDecision(r.Context(), r.PathValue("serial"), ledger.Decision{At: rec.at(), Kind: rec.Kind, Reason: rec.Reason})
	if err != nil {
		return 0, nil, err
	}
	s.noteHull(r, r.PathValue("serial"))
	return http.StatusCreated, d, nil
}

// report writes a PDF report as the person (issuing one is recorded, so
// the role decides) and sends it.
func (s *Server) report(kind string) handlerFunc {
	return func(w http.ResponseWriter, r *http.Request, l *ledger.Ledger) (int, any, error) {
		// Issuing a report is recorded: ask the database first whether the
		// person may, before rendering anything.
		var may bool
		if err := l.Pool().QueryRow(r.Context(), "SELECT has_table_privilege('issued_reports', 'INSERT')").Scan(&may); err != nil {
			return 0, nil, err
		}
		if !may {
			return http.StatusForbidden, errorDoc("not_permitted", fmt.Sprintf("not permitted: %s (%s) may not issue reports; nothing was stored", l.Identity().Name, l.Identity().Role)), nil
		}
		release, err := s.heavy(r.Context())
		if err != nil {
			return 0, nil, err
		}
		defer release()
		subject := "fleet"
		switch kind {
		case reports.KindHull:
			subject = r.PathValue("serial")
		case reports.KindDive:
			subject = r.PathValue("id")
		}
		dir, err := os.MkdirTemp(s.opt.TempDir, "hulltally-report-")
		if err != nil {
			return 0, nil, err
		}
		defer os.RemoveAll(dir)
		cp, err := l.LatestCheckpoint(r.Context())
		if err != nil {
			return 0, nil, err
		}
		out := filepath.Join(dir, "report.pdf")
		rep, err := reports.WriteWith(r.Context(), l, kind, subject, out, time.Now(), reports.WriteOptions{Signer: s.opt.Signer, Checkpoint: cp})
		if err != nil {
			return 0, nil, err
		}
		f, err := os.Open(out)
		if err != nil {
			return 0, nil, err
		}
		defer f.Close()
		w.Header().Set("Content-Type", "application/pdf")
		w.Header().Set("Content-Disposition", fmt.Sprintf("attachment; filename=%q", kind+"-"+filepath.Base(subject)+".pdf"))
		w.Header().Set("X-Report-Fingerprint", rep.Fingerprint)
		w.Header().Set("X-Report-Signed", strconv.FormatBool(rep.Signed))
		w.WriteHeader(http.StatusOK)
		_, _ = io.Copy(w, f)
		return 0, nil, nil
	}
}

// maxReport bounds an uploaded report.
const maxReport = 32 << 20

// verifyReport checks an uploaded PDF (the request body) against the
// ledger, and its signature by the service's key when it has one. The
// answer is 200 with "ok" true or false and the reason.
func (s *Server) verifyReport(w http.ResponseWriter, r *http.Request, l *ledger.Ledger) (int, any, error) {
	dir, err := os.MkdirTemp(s.opt.TempDir, "hulltally-verify-")
	if err != nil {
		return 0, nil, err
	}
	defer os.RemoveAll(dir)
	path := filepath.Join(dir, "report.pdf")
	if _, err := spool(path, http.MaxBytesReader(w, r.Body, maxReport)); err != nil {
		return 0, nil, err
	}
	v, err := s.checkReport(r.Context(), l, path)
	if err != nil {
		return 0, nil, err
	}
	return http.StatusOK, v, nil
}

// checkReport verifies a report file against the ledger as the person,
// and its signature by the service's key when it has one, in its turn
// among the heavy requests.
func (s *Server) checkReport(ctx context.Context, l *ledger.Ledger, path string) (*reports.Verification, error) {
	release, err := s.heavy(ctx)
	if err != nil {
		return nil, err
	}
	defer release()
	var o reports.VerifyOptions
	if s.opt.Signer != nil {
		o.Key = s.opt.Signer.Public()
	}
	return reports.VerifyWith(ctx, l, path, o)
}

// maxField bounds a text part of an upload.
const maxField = 1024

// fileName is the client's file name when it is a plain one (at most 128
// bytes of printable UTF-8, no folder, not "." or ".."), else def: it is
// stored with the dive and shown in reports and terminals.
func fileName(name, def string) string {
	base := filepath.Base(strings.ReplaceAll(name, "\\", "/"))
	if base == "." || base == ".." || base == "/" || base == "" || len(base) > 128 || !utf8.ValidString(base) {
		return def
	}
	for _, r := range base {
		if unicode.IsControl(r) || r == unicode.ReplacementChar {
			return def
		}
	}
	return base
}

// heavy waits for a turn among the requests that hold much memory (dive
// logging, report rendering and verification: Options.MaxIngests at once)
// and returns its release.
func (s *Server) heavy(ctx context.Context) (func(), error) {
	select {
	case s.ingests <- struct{}{}:
		return func() { <-s.ingests }, nil
	case <-ctx.Done():
		return nil, ctx.Err()
	}
}
