package web

import (
	"bytes"
	"context"
	"embed"
	"errors"
	"fmt"
	"html/template"
	"io"
	"log/slog"
	"math"
	"net/http"
	"net/url"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"time"

	"hulltally/fatigue/seawater"
	"hulltally/ledger"
	"hulltally/reports"
	"hulltally/reports/view"
)

// The pages: server-rendered html/template over the same views as the
// command line and the PDFs, the assets embedded (nothing is fetched from
// elsewhere), small progressive JavaScript for upload progress only. A
// person signs in with their own database password (ledger.SignIn); the
// session is a day's API token in a Secure, HttpOnly, SameSite=Strict
// cookie, so a page request runs as the person inside the database, like
// an API request. Every form is protected against cross-origin posts
// (http.CrossOriginProtection); a form a role may not use is neither
// shown nor accepted, and the database refuses it as well.

//go:embed templates/*.html assets/*
var pageFiles embed.FS

// sessionCookie is the session's cookie: __Host-, so that only this
// origin may set it (Secure, path /, no domain), never a sibling host.
const sessionCookie = "__Host-hulltally_session"

// pageSize is the dives shown per page of a hull.
const pageSize = 50

// pages holds the parsed templates, one set per page.
type pages struct {
	t map[string]*template.Template
}

func loadPages() (*pages, error) {
	funcs := template.FuncMap{
		"pct":   func(r ledger.Num) string { return view.Percent(float64(r)) },
		"ratio": func(r float64) string { return view.Percent(r) },
		"date": func(t any) string {
			switch v := t.(type) {
			case time.Time:
				return v.UTC().Format("2006-01-02 15:04")
			case *time.Time:
				if v == nil {
					return "–"
				}
				return v.UTC().Format("2006-01-02 15:04")
			}
			return ""
		},
		"upper": strings.ToUpper,
		"f":     func(format string, v any) string { return fmt.Sprintf(format, v) },
		"opt": func(format string, v *float64) string {
			if v == nil {
				return "not evaluated"
			}
			return fmt.Sprintf(format, *v)
		},
		"short":  func(s string) string { return s[:min(8, len(s))] },
		"path":   url.PathEscape,
		"add":    func(a, b int) int { return a + b },
		"reason": func(x view.ReasonLine) string { return x.Text() },
		"hours":  func(s float64) string { return fmt.Sprintf("%.2f", s/3600) },
		"pctp": func(v *float64) string {
			if v == nil {
				return "–"
			}
			return fmt.Sprintf("%+.2f %%", 100**v)
		},
	}
	base, err := template.New("layout.html").Funcs(funcs).ParseFS(pageFiles, "templates/layout.html")
	if err != nil {
		return nil, err
	}
	names, err := pageFiles.ReadDir("templates")
	if err != nil {
		return nil, err
	}
	p := &pages{t: map[string]*template.Template{}}
	for _, n := range names {
		if n.Name() == "layout.html" {
			continue
		}
		t, err := template.Must(base.Clone()).ParseFS(pageFiles, "templates/"+n.Name())
		if err != nil {
			return nil, err
		}
		p.t[strings.TrimSuffix(n.Name(), ".html")] = t
	}
	return p, nil
}

// page is what every page's template gets.
type page struct {
	Title   string
	Who     ledger.Identity
	Caution string
	// May says what the person's role may do (the forms shown).
	May  may
	Body any
}

// may is what a role may do, for the forms a page shows (the database
// decides all the same).
type may struct {
	LogDives, Maintain, IssueReports bool
}

func mayOf(id ledger.Identity) may {
	switch {
	case id.Owner, id.Role == ledger.RoleMaintenance:
		return may{LogDives: true, Maintain: true, IssueReports: true}
	case id.Role == ledger.RoleOperator:
		return may{LogDives: true}
	}
	return may{}
}

// render writes a page.
func (s *Server) render(w http.ResponseWriter, code int, name string, p page) {
	var b bytes.Buffer
	p.Caution = reports.Caution
	if err := s.pages.t[name].ExecuteTemplate(&b, "layout.html", p); err != nil {
		s.log.Error("rendering a page", "page", name, "error", err.Error())
		http.Error(w, "the page could not be rendered (see the service's log)", http.StatusInternalServerError)
		return
	}
	h := w.Header()
	h.Set("Content-Type", "text/html; charset=utf-8")
	h.Set("Cache-Control", "no-store")
	h.Set("Content-Security-Policy", "default-src 'self'; img-src 'self'; style-src 'self'; script-src 'self'; form-action 'self'; frame-ancestors 'none'; base-uri 'none'")
	h.Set("X-Content-Type-Options", "nosniff")
	h.Set("Referrer-Policy", "same-origin")
	w.WriteHeader(code)
	_, _ = w.Write(b.Bytes())
}

// pageFunc handles a page as the signed-in person.
type pageFunc func(w http.ResponseWriter, r *http.Request, l *ledger.Ledger) error

// routePages registers the pages on the service's mux.
func (s *Server) routePages() {
	cop := http.NewCrossOriginProtection()
	reg := func(pattern string, h http.Handler) {
		s.mux.Handle(pattern, cop.Handler(h))
	}
	reg("GET /assets/", http.FileServerFS(pageFiles))
	reg("GET /sign-in", http.HandlerFunc(s.signInPage))
	reg("POST /sign-in", http.HandlerFunc(s.signIn))
	reg("POST /sign-out", http.HandlerFunc(s.signOut))
	for pattern, h := range map[string]pageFunc{
		"GET /{$}": func(w http.ResponseWriter, r *http.Request, _ *ledger.Ledger) error {
			http.Redirect(w, r, "/fleet", http.StatusSeeOther)
			return nil
		},
		"GET /fleet":                         s.fleetPage,
		"GET /hulls/{serial}":                s.hullPage,
		"GET /hulls/{serial}/charts/{chart}": s.chartPage,
		"GET /hulls/{serial}/clearance":      s.clearancePage,
		"GET /hulls/{serial}/log":            s.logPage,
		"POST /hulls/{serial}/log":           s.logPost,
		"POST /hulls/{serial}/inspections":   s.recordPost("inspection"),
		"POST /hulls/{serial}/proof-tests":   s.recordPost("proof test"),
		"POST /hulls/{serial}/decisions":     s.recordPost("decision"),
		"POST /hulls/{serial}/report.pdf":    s.reportPage(reports.KindHull),
		"GET /dives/{id}":                    s.divePage,
		"GET /dives/{id}/profile.svg":        s.diveProfilePage,
		"GET /verify-report":                 s.verifyPage,
		"POST /verify-report":                s.verifyPost,
	} {
		reg(pattern, s.signedIn(h))
	}
}

// signedIn runs a page as the person of the session cookie; without a
// valid session it sends the browser to the sign-in page.
func (s *Server) signedIn(h pageFunc) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		c, err := r.Cookie(sessionCookie)
		var person string
		var l *ledger.Ledger
		if err == nil {
			person, err = s.owner.Authenticate(r.Context(), c.Value, time.Now().UTC())
			if err == nil {
				l, err = s.ledgerOf(r.Context(), person)
			}
		}
		if err != nil {
			if err != http.ErrNoCookie && !errors.Is(err, ledger.ErrBadToken) {
				s.log.Error("a session could not be checked", "remote", client(r), "error", err.Error())
				s.errorPage(w, http.StatusServiceUnavailable, nil, "The service cannot check sessions now; try again.")
				return
			}
			if r.Method != http.MethodGet {
				s.errorPage(w, http.StatusUnauthorized, nil, "Your session has ended: sign in again; nothing was stored.")
				return
			}
			http.Redirect(w, r, "/sign-in?next="+url.QueryEscape(r.URL.RequestURI()), http.StatusSeeOther)
			return
		}
		r, done := s.track(w, r, person)
		defer done()
		if err := h(w, r, l); err != nil {
			if errors.Is(context.Cause(r.Context()), errPersonGone) {
				err = fmt.Errorf("%w: %w", errPersonGone, err)
			}
			code, doc := s.errorAnswer(err, l)
			msg := ""
			if e, ok := doc.(map[string]any)["error"].(map[string]string); ok {
				msg = e["message"]
			}
			level := slog.LevelInfo
			if code >= 500 {
				level = slog.LevelError
			}
			s.log.Log(r.Context(), level, "page failed", "path", r.URL.Path, "person", person, "code", code, "error", err.Error())
			s.errorPage(w, code, l, msg)
		}
	})
}

func (s *Server) errorPage(w http.ResponseWriter, code int, l *ledger.Ledger, msg string) {
	p := page{Title: http.StatusText(code), Body: map[string]any{"Code": code, "Message": msg}}
	if l != nil {
		p.Who, p.May = l.Identity(), mayOf(l.Identity())
	}
	s.render(w, code, "error", p)
}

func (s *Server) pageOf(l *ledger.Ledger, title string, body any) page {
	return page{Title: title, Who: l.Identity(), May: mayOf(l.Identity()), Body: body}
}

// safeNext is a local path to go to after signing in, else /fleet.
func safeNext(next string) string {
	u, err := url.Parse(next)
	if err != nil || u.Scheme != "" || u.Host != "" || u.User != nil || !strings.HasPrefix(next, "/") ||
		strings.HasPrefix(next, "//") || strings.ContainsAny(next, "\\") || strings.IndexFunc(next, func(r rune) bool { return r < 0x20 || r == 0x7f }) >= 0 {
		return "/fleet"
	}
	return next
}

func (s *Server) signInPage(w http.ResponseWriter, r *http.Request) {
	s.render(w, http.StatusOK, "sign-in", page{Title: "Sign in", Body: map[string]string{"Next": safeNext(r.URL.Query().Get("next"))}})
}

func (s *Server) signIn(w http.ResponseWriter, r *http.Request) {
	addr := client(r)
	refuse := func(code int, msg string) {
		s.render(w, code, "sign-in", page{Title: "Sign in", Body: map[string]string{"Next": safeNext(r.FormValue("next")), "Error": msg}})
	}
	ok, succeeded := s.fails.attempt(addr)
	if !ok {
		s.badAuth.Inc()
		s.log.Warn("sign-in refused: too many failed sign-ins", "remote", addr)
		refuse(http.StatusTooManyRequests, "Too many failed sign-ins from this address: wait a minute and try again.")
		return
	}
	// Each check opens a database connection: a few at once.
	select {
	case s.signIns <- struct{}{}:
		defer func() { <-s.signIns }()
	default:
		succeeded()
		refuse(http.StatusTooManyRequests, "The service is checking other sign-ins: try again in a moment.")
		return
	}
	r.Body = http.MaxBytesReader(w, r.Body, 8<<10)
	name, password := strings.TrimSpace(r.FormValue("name")), r.FormValue("password")
	tok, err := s.owner.SignIn(r.Context(), name, password)
	if err == nil || !errors.Is(err, ledger.ErrBadPassword) {
		succeeded() // not a failed sign-in
	}
	if errors.Is(err, ledger.ErrBadPassword) {
		s.badAuth.Inc()
		s.log.Warn("sign-in refused", "remote", addr, "name", name) // never the password
		refuse(http.StatusUnauthorized, "The name or the password is not valid.")
		return
	}
	if err != nil {
		s.log.Error("a sign-in could not be checked", "remote", addr, "error", err.Error())
		refuse(http.StatusServiceUnavailable, "The service cannot check sign-ins now; try again.")
		return
	}
	if old, err := r.Cookie(sessionCookie); err == nil {
		// A session replaced is a session ended.
		if err := s.owner.RevokeSecret(r.Context(), old.Value); err != nil && !errors.Is(err, ledger.ErrBadToken) {
			s.log.Error("ending the session a sign-in replaces", "error", err.Error())
		}
	}
	http.SetCookie(w, &http.Cookie{Name: sessionCookie, Value: tok.Secret, Path: "/", MaxAge: 86400,
		HttpOnly: true, Secure: true, SameSite: http.SameSiteStrictMode})
	s.log.Info("signed in", "remote", addr, "person", tok.Person)
	http.Redirect(w, r, safeNext(r.FormValue("next")), http.StatusSeeOther)
}

func (s *Server) signOut(w http.ResponseWriter, r *http.Request) {
	if c, err := r.Cookie(sessionCookie); err == nil {
		if err := s.owner.RevokeSecret(r.Context(), c.Value); err != nil && !errors.Is(err, ledger.ErrBadToken) {
			s.log.Error("signing out", "error", err.Error())
		}
	}
	http.SetCookie(w, &http.Cookie{Name: sessionCookie, Value: "", Path: "/", MaxAge: -1, HttpOnly: true, Secure: true, SameSite: http.SameSiteStrictMode})
	http.Redirect(w, r, "/sign-in", http.StatusSeeOther)
}

func (s *Server) fleetPage(w http.ResponseWriter, r *http.Request, l *ledger.Ledger) error {
	rows, err := view.FleetRowsOf(r.Context(), l, time.Now().UTC())
	if err != nil {
		return err
	}
	s.render(w, http.StatusOK, "fleet", s.pageOf(l, "Fleet", rows))
	return nil
}

// hullBody is the hull page's content.
type hullBody struct {
	Record  *ledger.Hull
	Summary *ledger.HullSummary
	// Entry is the hull's status, reasons, governing damage and life as
	// the fleet view has them (its fleet summary when it stands, else
	// evaluated for this read); Life and Shown are what may be shown of
	// them (void while on hold or withdrawn).
	Entry       *ledger.FleetEntry
	Shown       *ledger.Damages
	Life        view.Life
	Reasons     []view.ReasonLine
	RulesSource string
	// Components are the cumulative damage per component.
	Components  []ledger.ComponentDamage
	Implosion   *ledger.Implosion
	Maintenance *ledger.Maintenance
	History     []ledger.StatusChange
	Dives       []ledger.Dive
	Page, Pages int
	Charts      []chart
}

// chart is a hull chart to show: its name and its text alternative.
type chart struct{ Name, Alt string }

// hullPage shows a hull. Its status and reasons come as the fleet view's
// do (ledger.FleetEntryOf: the summary the last write left, when it still
// stands for the hull, else evaluated now), so that a hull of many dives
// is not evaluated at every look; its dives come a page at a time.
func (s *Server) hullPage(w http.ResponseWriter, r *http.Request, l *ledger.Ledger) error {
	ctx := r.Context()
	now := time.Now().UTC()
	b := hullBody{RulesSource: l.RulesSource()}
	err := l.Snapshot(ctx, func(sl *ledger.Ledger) error {
		rec, err := sl.Hull(ctx, r.PathValue("serial"))
		if err != nil {
			return unknownHull(err)
		}
		b.Record = rec
		if b.Summary, err = sl.HullSummary(ctx, rec.ID); err != nil {
			return err
		}
		if b.Entry, err = sl.FleetEntryOf(ctx, rec, now); err != nil {
			return err
		}
		dmg, err := sl.HullDamage(ctx, rec)
		if err != nil {
			return err
		}
		b.Components = dmg.Components
		if b.Maintenance, err = sl.MaintenanceOf(ctx, rec); err != nil {
			return err
		}
		if b.History, err = sl.StatusHistory(ctx, rec); err != nil {
			return err
		}
		if b.Implosion, err = ledger.ImplosionOf(rec, seawater.DepthToMPa(rec.Spec.RatedDepthM, 90)); err != nil {
			return err
		}
		// Every dive counts for the pages, void ones too (the summary's
		// count leaves them out): none may be out of reach.
		b.Page, _ = strconv.Atoi(r.URL.Query().Get("page"))
		b.Page = max(b.Page, 1)
		var total int
		if b.Dives, total, err = sl.DivesPage(ctx, rec.Serial, (b.Page-1)*pageSize, pageSize); err != nil {
			return err
		}
		b.Pages = max(1, (total+pageSize-1)/pageSize)
		if b.Page > b.Pages {
			b.Page = b.Pages
			b.Dives, _, err = sl.DivesPage(ctx, rec.Serial, (b.Page-1)*pageSize, pageSize)
		}
		return err
	})
	if err != nil {
		return err
	}
	b.Shown, b.Life = view.ShownDamage(b.Entry.Status, b.Entry.Damage), view.LifeOf(b.Entry.Status, b.Entry.Damage)
	b.Reasons = view.CollapseReasons(b.Entry.Reasons, true)
	for _, n := range []string{reports.ChartDamage, reports.ChartCycles, reports.ChartFelicity, reports.ChartCompliance, reports.ChartProfile} {
		b.Charts = append(b.Charts, chart{Name: n, Alt: chartTitles[n] + " of " + b.Record.Serial})
	}
	s.render(w, http.StatusOK, "hull", s.pageOf(l, b.Record.Serial, b))
	return nil
}

// chartTitles are the hull charts' text alternatives.
var chartTitles = map[string]string{
	reports.ChartDamage:     "Cumulative damage against the allowable, per dive, with the limits of the rules and the projection",
	reports.ChartCycles:     "Rainflow histogram of the hull's pressure cycles",
	reports.ChartFelicity:   "Felicity ratio per dive with the rule's limits",
	reports.ChartCompliance: "Compliance per strain gauge and dive against its baseline",
	reports.ChartProfile:    "Pressure profile of the deepest recent dive",
}

func (s *Server) chartPage(w http.ResponseWriter, r *http.Request, l *ledger.Ledger) error {
	name := strings.TrimSuffix(r.PathValue("chart"), ".svg")
	if _, ok := chartTitles[name]; !ok {
		return &ledger.InputError{Err: fmt.Errorf("no chart %q", name)}
	}
	cs, err := reports.HullChartsSVG(r.Context(), l, r.PathValue("serial"), time.Now().UTC())
	if err != nil {
		return err
	}
	svg, ok := cs[name]
	if !ok {
		return &ledger.InputError{Err: fmt.Errorf("hull %s has no %s chart (no such data yet)", r.PathValue("serial"), name)}
	}
	writeSVG(w, svg)
	return nil
}

// writeSVG answers a chart.
func writeSVG(w http.ResponseWriter, svg []byte) {
	w.Header().Set("Content-Type", "image/svg+xml")
	w.Header().Set("Cache-Control", "no-store")
	w.Header().Set("X-Content-Type-Options", "nosniff")
	_, _ = w.Write(svg)
}

func (s *Server) clearancePage(w http.ResponseWriter, r *http.Request, l *ledger.Ledger) error {
	q := r.URL.Query()
	body := map[string]any{"Serial": r.PathValue("serial"), "Depth": q.Get("depth_m"), "Bottom": q.Get("bottom_min")}
	if q.Get("depth_m") != "" {
		depth, err := strconv.ParseFloat(q.Get("depth_m"), 64)
		if err != nil || math.IsInf(depth, 0) || math.IsNaN(depth) {
			return &ledger.InputError{Err: fmt.Errorf("the planned depth %q: a number of metres", q.Get("depth_m"))}
		}
		bottom := 0.0
		if v := q.Get("bottom_min"); v != "" {
			if bottom, err = strconv.ParseFloat(v, 64); err != nil || math.IsInf(bottom, 0) || math.IsNaN(bottom) {
				return &ledger.InputError{Err: fmt.Errorf("the bottom time %q: a number of minutes", v)}
			}
		}
		c, err := l.Clear(r.Context(), r.PathValue("serial"), depth, bottom, time.Now().UTC())
		if err != nil {
			return err
		}
		body["Answer"] = c
		body["Reasons"] = view.CollapseReasons(c.Reasons, true)
	}
	s.render(w, http.StatusOK, "clearance", s.pageOf(l, "Clearance of "+r.PathValue("serial"), body))
	return nil
}

func (s *Server) logPage(w http.ResponseWriter, r *http.Request, l *ledger.Ledger) error {
	if _, err := l.Hull(r.Context(), r.PathValue("serial")); err != nil {
		return unknownHull(err)
	}
	s.render(w, http.StatusOK, "log", s.pageOf(l, "Log a dive of "+r.PathValue("serial"), map[string]any{"Serial": r.PathValue("serial")}))
	return nil
}

// logPost logs an uploaded dive (the same upload as the API's) and shows
// the verdict.
func (s *Server) logPost(w http.ResponseWriter, r *http.Request, l *ledger.Ledger) error {
	if !mayOf(l.Identity()).LogDives {
		return notPermitted(l, "log dives")
	}
	_, _, err := s.readUpload(w, r, nil, func(req ledger.LogRequest) (int, any, error) {
		g, err := s.logUploaded(r, l, req)
		if err != nil {
			return 0, nil, err
		}
		s.render(w, http.StatusOK, "logged", s.pageOf(l, "Dive logged", map[string]any{"L": g, "After": view.CollapseReasons(g.Reasons, false)}))
		return 0, nil, nil
	})
	return err
}

// unknownHull makes an unknown hull bad input (404); any other error of a
// hull's lookup is the service's failure, not the person's input.
func unknownHull(err error) error {
	if errors.Is(err, ledger.ErrUnknownHull) {
		return &ledger.InputError{Err: err}
	}
	return err
}

// notPermitted is the handler's refusal of a form the role may not use
// (the database would refuse it too).
func notPermitted(l *ledger.Ledger, what string) error {
	id := l.Identity()
	return &ledger.NotPermittedError{Identity: id, Err: fmt.Errorf("the %s role may not %s", id.Role, what)}
}

// recordPost records an inspection, a proof test without samples or a
// decision from its form, then goes back to the hull.
func (s *Server) recordPost(kind string) pageFunc {
	return func(w http.ResponseWriter, r *http.Request, l *ledger.Ledger) error {
		if !mayOf(l.Identity()).Maintain {
			return notPermitted(l, "record a "+kind)
		}
		r.Body = http.MaxBytesReader(w, r.Body, maxJSON)
		if err := r.ParseForm(); err != nil {
			return &ledger.InputError{Err: fmt.Errorf("the form: %w", err)}
		}
		f := func(k string) string { return strings.TrimSpace(r.PostForm.Get(k)) }
		var at time.Time
		if v := f("at"); v != "" {
			t, err := time.Parse("2006-01-02T15:04", v)
			if err != nil {
				return &ledger.InputError{Err: fmt.Errorf("when %q: a date and time (UTC)", v)}
			}
			at = t.UTC()
		}
		serial := r.PathValue("serial")
		var err error
		switch kind {
		case "inspection":
			_, err = l.RecordInspection(r.Context(), serial, ledger.Inspection{At: at, Method: f("method"), Result: f("result"), Findings: f("findings")})
		case "proof test":
			p, perr := strconv.ParseFloat(f("pressure_mpa"), 64)
			if perr != nil || math.IsNaN(p) || math.IsInf(p, 0) {
				return &ledger.InputError{Err: fmt.Errorf("the test pressure %q: a number of MPa", f("pressure_mpa"))}
			}
			_, err = l.RecordProofTest(r.Context(), serial, ledger.ProofTest{At: at, PressureMPa: p, Result: f("result"), Notes: f("notes")})
		case "decision":
			_, err = l.RecordDecision(r.Context(), serial, ledger.Decision{At: at, Kind: f("kind"), Reason: f("reason")})
		}
		if err != nil {
			return err
		}
		s.noteHull(r, serial)
		http.Redirect(w, r, "/hulls/"+url.PathEscape(serial)+"#records", http.StatusSeeOther)
		return nil
	}
}

// reportPage sends a PDF report (issuing one is recorded: the roles that
// may).
func (s *Server) reportPage(kind string) pageFunc {
	h := s.report(kind)
	return func(w http.ResponseWriter, r *http.Request, l *ledger.Ledger) error {
		code, body, err := h(w, r, l)
		if err != nil {
			return err
		}
		if code != 0 {
			msg := "the report could not be issued"
			if d, ok := body.(map[string]any); ok {
				if e, ok := d["error"].(map[string]string); ok {
					msg = e["message"]
				}
			}
			s.errorPage(w, code, l, msg)
		}
		return nil
	}
}

func (s *Server) divePage(w http.ResponseWriter, r *http.Request, l *ledger.Ledger) error {
	dv, err := view.DiveOf(r.Context(), l, r.PathValue("id"))
	if err != nil {
		return err
	}
	if err := dv.WithHull(r.Context(), l, time.Now().UTC()); err != nil {
		return err
	}
	var full, half float64
	biggest := 0.0
	for _, c := range dv.Load.PressureCycles {
		if c.Count == 1 {
			full++
		} else {
			half++
		}
		biggest = max(biggest, c.RangeMPa)
	}
	s.render(w, http.StatusOK, "dive", s.pageOf(l, "Dive "+dv.Record.ID.String()[:8], map[string]any{
		"D": dv, "Full": full, "Half": half, "Biggest": biggest}))
	return nil
}

func (s *Server) diveProfilePage(w http.ResponseWriter, r *http.Request, l *ledger.Ledger) error {
	svg, err := reports.DiveProfileSVG(r.Context(), l, r.PathValue("id"))
	if err != nil {
		return err
	}
	if svg == nil {
		return &ledger.InputError{Err: fmt.Errorf("dive %s has no profile on record", r.PathValue("id"))}
	}
	writeSVG(w, svg)
	return nil
}

func (s *Server) verifyPage(w http.ResponseWriter, _ *http.Request, l *ledger.Ledger) error {
	s.render(w, http.StatusOK, "verify", s.pageOf(l, "Verify a report", nil))
	return nil
}

// verifyPost checks an uploaded report (multipart part "report") against
// the ledger, and its signature by the service's key when it has one.
func (s *Server) verifyPost(w http.ResponseWriter, r *http.Request, l *ledger.Ledger) error {
	r.Body = http.MaxBytesReader(w, r.Body, maxReport+64<<10)
	mr, err := r.MultipartReader()
	if err != nil {
		return &ledger.InputError{Err: fmt.Errorf("a report file is expected: %w", err)}
	}
	p, err := mr.NextPart()
	if err != nil || p.FormName() != "report" {
		return &ledger.InputError{Err: errors.New("a report file (the part \"report\") is expected")}
	}
	dir, err := os.MkdirTemp(s.opt.TempDir, "hulltally-verify-")
	if err != nil {
		return err
	}
	defer os.RemoveAll(dir)
	path := filepath.Join(dir, "report.pdf")
	n, err := spool(path, io.LimitReader(p, maxReport+1))
	if err != nil {
		return err
	}
	if n > maxReport {
		return &http.MaxBytesError{Limit: maxReport}
	}
	v, err := s.checkReport(r.Context(), l, path)
	if err != nil {
		return err
	}
	s.render(w, http.StatusOK, "verify", s.pageOf(l, "Verify a report", v))
	return nil
}
