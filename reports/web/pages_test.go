package web

import (
	"bytes"
	"context"
	"fmt"
	"io"
	"mime/multipart"
	"net/http"
	"net/url"
	"regexp"
	"strings"
	"sync"
	"testing"
	"time"

	"hulltally/ledger"
	"hulltally/reports"
)

// browser is a minimal same-origin client of the pages: it keeps the
// session cookie (Go's cookie jar will not send a Secure cookie over
// plain http; browsers do to a loopback address) and follows no redirect.
type browser struct {
	t      *testing.T
	f      *fixture
	cookie *http.Cookie
}

func (f *fixture) browser(t *testing.T) *browser { return &browser{t: t, f: f} }

// send makes a request as a page of the service would (same origin).
func (b *browser) send(method, path string, body io.Reader, ctype string, hdr ...string) (*http.Response, string) {
	b.t.Helper()
	req, err := http.NewRequest(method, b.f.http.URL+path, body)
	if err != nil {
		b.t.Fatal(err)
	}
	if ctype != "" {
		req.Header.Set("Content-Type", ctype)
	}
	req.Header.Set("Sec-Fetch-Site", "same-origin")
	for i := 0; i+1 < len(hdr); i += 2 {
		req.Header.Set(hdr[i], hdr[i+1])
	}
	if b.cookie != nil {
		req.AddCookie(b.cookie)
	}
	c := &http.Client{CheckRedirect: func(*http.Request, []*http.Request) error { return http.ErrUseLastResponse }}
	res, err := c.Do(req)
	if err != nil {
		b.t.Fatal(err)
	}
	defer res.Body.Close()
	out, _ := io.ReadAll(res.Body)
	for _, ck := range res.Cookies() {
		if ck.Name == sessionCookie {
			if ck.MaxAge < 0 {
				b.cookie = nil
			} else {
				b.cookie = ck
			}
		}
	}
	return res, string(out)
}

func (b *browser) get(path string) (*http.Response, string) { return b.send("GET", path, nil, "") }

func (b *browser) post(path string, form url.Values, hdr ...string) (*http.Response, string) {
	return b.send("POST", path, strings.NewReader(form.Encode()), "application/x-www-form-urlencoded", hdr...)
}

// signIn signs the role's person in.
func (b *browser) signIn(role ledger.Role) {
	b.t.Helper()
	res, body := b.post("/sign-in", url.Values{"name": {b.f.names[role]}, "password": {b.f.passwords[role]}, "next": {"/fleet"}})
	if res.StatusCode != http.StatusSeeOther || b.cookie == nil {
		b.t.Fatalf("sign-in as %s: %d\n%s", role, res.StatusCode, body)
	}
}

// TestPagesSignIn: the pages need a session; a wrong password, a
// made-up cookie or a session signed out gets none. The session cookie is
// Secure, HttpOnly and SameSite=Strict, and no secret reaches a page.
func TestPagesSignIn(t *testing.T) {
	f := newFixture(t, Options{MaxUploadBytes: 1 << 20})
	b := f.browser(t)
	if res, _ := b.get("/fleet"); res.StatusCode != http.StatusSeeOther || !strings.HasPrefix(res.Header.Get("Location"), "/sign-in?next=%2Ffleet") {
		t.Fatalf("the fleet without a session: %d %s", res.StatusCode, res.Header.Get("Location"))
	}
	if res, body := b.get("/sign-in"); res.StatusCode != 200 || !strings.Contains(body, `name="password"`) || !strings.Contains(body, reports.Caution[:40]) {
		t.Fatalf("the sign-in page: %d\n%s", res.StatusCode, body)
	}
	for _, form := range []url.Values{
		{"name": {f.names[ledger.RoleOperator]}, "password": {f.passwords[ledger.RoleOperator] + "x"}},
		{"name": {"nobody-here"}, "password": {"whatever"}},
		{"name": {f.names[ledger.RoleOperator]}, "password": {""}},
	} {
		res, body := b.post("/sign-in", form)
		if res.StatusCode != http.StatusUnauthorized || b.cookie != nil || (form.Get("password") != "" && strings.Contains(body, form.Get("password"))) {
			t.Fatalf("a wrong sign-in %v: %d, cookie %v", form.Get("name"), res.StatusCode, b.cookie)
		}
	}
	b.cookie = &http.Cookie{Name: sessionCookie, Value: "htk_made-up"}
	if res, _ := b.get("/fleet"); res.StatusCode != http.StatusSeeOther {
		t.Fatalf("a made-up session: %d", res.StatusCode)
	}
	b.cookie = nil
	b.signIn(ledger.RoleOperator)
	if c := b.cookie; !c.Secure || !c.HttpOnly || c.SameSite != http.SameSiteStrictMode || c.Path != "/" {
		t.Fatalf("the session cookie: %+v", c)
	}
	res, body := b.get("/fleet")
	if res.StatusCode != 200 || !strings.Contains(body, serial) || !strings.Contains(body, f.names[ledger.RoleOperator]) || strings.Contains(body, b.cookie.Value) {
		t.Fatalf("the fleet signed in: %d\n%s", res.StatusCode, body)
	}
	// Signing in again ends the session it replaces.
	first := b.cookie
	b.signIn(ledger.RoleOperator)
	if b.cookie.Value == first.Value {
		t.Fatal("a second sign-in kept the session")
	}
	kept := b.cookie
	b.cookie = first
	if res, _ := b.get("/fleet"); res.StatusCode != http.StatusSeeOther {
		t.Fatalf("a session replaced by a new sign-in still opens the fleet: %d", res.StatusCode)
	}
	b.cookie = kept
	old := b.cookie
	if res, _ := b.post("/sign-out", nil); res.StatusCode != http.StatusSeeOther || b.cookie != nil {
		t.Fatalf("sign-out: %d %v", res.StatusCode, b.cookie)
	}
	b.cookie = old // the session is revoked, not only forgotten
	if res, _ := b.get("/fleet"); res.StatusCode != http.StatusSeeOther {
		t.Fatalf("a signed-out session still opens the fleet: %d", res.StatusCode)
	}
}

// TestPagesByRole: each role sees and may use its own forms. The
// adversarial cases store nothing: an inspector's forged post (refused by
// the handler, and by the database were it let through), an operator's
// decision, and a cross-origin post with a valid session.
func TestPagesByRole(t *testing.T) {
	f := newFixture(t, Options{MaxUploadBytes: 1 << 20})
	ctx := context.Background()
	count := func(table string) int64 {
		var n int64
		if err := f.owner.Pool().QueryRow(ctx, "SELECT count(*) FROM "+table).Scan(&n); err != nil {
			t.Fatal(err)
		}
		return n
	}
	hull := "/hulls/" + serial
	formsOf := func(body string) []string {
		var out []string
		for _, m := range regexp.MustCompile(`<form[^>]*method="post"[^>]*action="([^"]+)"`).FindAllStringSubmatch(body, -1) {
			if m[1] != "/sign-out" {
				out = append(out, m[1])
			}
		}
		return out
	}

	// The operator logs a dive on the page and sees the verdict.
	op := f.browser(t)
	op.signIn(ledger.RoleOperator)
	var up bytes.Buffer
	mw := multipart.NewWriter(&up)
	mw.WriteField("lat", "45")
	w, _ := mw.CreateFormFile("samples", "d.csv")
	io.WriteString(w, diveCSV)
	mw.Close()
	res, body := op.send("POST", hull+"/log", &up, mw.FormDataContentType())
	if res.StatusCode != 200 || !strings.Contains(body, "logged on") || !strings.Contains(body, "Hull status") {
		t.Fatalf("the operator's upload: %d\n%s", res.StatusCode, body)
	}
	id := regexp.MustCompile(`href="/dives/([0-9a-f-]{36})"`).FindStringSubmatch(body)
	if id == nil {
		t.Fatalf("no link to the dive:\n%s", body)
	}
	for _, p := range []string{"/dives/" + id[1], "/dives/" + id[1] + "/profile.svg", hull + "/clearance?depth_m=100", hull + "/charts/damage.svg", hull + "/charts/cycles.svg"} {
		if res, body := op.get(p); res.StatusCode != 200 {
			t.Fatalf("GET %s as the operator: %d\n%.500s", p, res.StatusCode, body)
		}
	}
	if _, body := op.get(hull + "/clearance?depth_m=100"); !strings.Contains(body, "GO for 100 m") {
		t.Fatalf("clearance: %s", body)
	}
	_, body = op.get(hull)
	if got := formsOf(body); len(got) != 0 {
		t.Fatalf("the operator sees forms %v on the hull page", got)
	}
	decisions := count("decisions")
	if res, _ := op.post(hull+"/decisions", url.Values{"kind": {"return_to_service"}, "reason": {"forged"}}); res.StatusCode != http.StatusForbidden || count("decisions") != decisions {
		t.Fatalf("an operator's decision: %d", res.StatusCode)
	}

	// Maintenance records an inspection from the hull page.
	mt := f.browser(t)
	mt.signIn(ledger.RoleMaintenance)
	_, body = mt.get(hull)
	if got := formsOf(body); len(got) != 4 { // inspection, proof test, decision, issue the report
		t.Fatalf("maintenance's forms on the hull page: %v", got)
	}
	inspections := count("inspections")
	res, _ = mt.post(hull+"/inspections", url.Values{"method": {"visual"}, "result": {"pass"}, "findings": {"none"}})
	if res.StatusCode != http.StatusSeeOther || count("inspections") != inspections+1 {
		t.Fatalf("maintenance's inspection: %d", res.StatusCode)
	}
	// Cross-origin, with maintenance's valid session: refused.
	res, _ = mt.post(hull+"/inspections", url.Values{"method": {"visual"}, "result": {"pass"}}, "Sec-Fetch-Site", "cross-site")
	if res.StatusCode != http.StatusForbidden || count("inspections") != inspections+1 {
		t.Fatalf("a cross-origin post: %d", res.StatusCode)
	}
	res, _ = mt.post(hull+"/inspections", url.Values{"method": {"visual"}, "result": {"pass"}}, "Sec-Fetch-Site", "", "Origin", "http://evil.example")
	if res.StatusCode != http.StatusForbidden || count("inspections") != inspections+1 {
		t.Fatalf("a post from another origin: %d", res.StatusCode)
	}

	// The inspector reads everything and can change nothing.
	in := f.browser(t)
	in.signIn(ledger.RoleInspector)
	_, body = in.get(hull)
	if got := formsOf(body); len(got) != 0 || strings.Contains(body, "Log a dive") {
		t.Fatalf("the inspector sees forms %v on the hull page", got)
	}
	for _, p := range []string{"/fleet", "/dives/" + id[1], "/verify-report"} {
		if res, _ := in.get(p); res.StatusCode != 200 {
			t.Fatalf("GET %s as the inspector: %d", p, res.StatusCode)
		}
	}
	for path, form := range map[string]url.Values{
		hull + "/inspections": {"method": {"visual"}, "result": {"pass"}},
		hull + "/proof-tests": {"pressure_mpa": {"50"}, "result": {"pass"}},
		hull + "/decisions":   {"kind": {"withdraw"}, "reason": {"forged"}},
	} {
		before := count("inspections") + count("proof_tests") + count("decisions")
		res, body := in.post(path, form)
		if res.StatusCode != http.StatusForbidden || count("inspections")+count("proof_tests")+count("decisions") != before || !strings.Contains(body, "not permitted") {
			t.Fatalf("the inspector's forged post to %s: %d\n%s", path, res.StatusCode, body)
		}
	}
	// The handler's refusal stands in front of the database's: an
	// inspector's ledger refuses the same record by itself.
	il, err := f.svc.ledgerOf(ctx, f.names[ledger.RoleInspector])
	if err != nil {
		t.Fatal(err)
	}
	if _, err := il.RecordInspection(ctx, serial, ledger.Inspection{Method: "visual", Result: "pass"}); !ledger.IsNotPermitted(err) {
		t.Fatalf("the database let an inspector record an inspection: %v", err)
	}
}

// TestSafeNext: after signing in, the browser goes only to a path of this
// service; anything a browser could read as another site goes to the
// fleet.
func TestSafeNext(t *testing.T) {
	for next, want := range map[string]string{
		"/hulls/EX-C4000-01?page=2": "/hulls/EX-C4000-01?page=2",
		"/fleet":                    "/fleet",
		"":                          "/fleet",
		"//evil.example/x":          "/fleet",
		"/\\evil.example/x":         "/fleet",
		"/\t/evil.example/x":        "/fleet",
		"/\n/evil.example/x":        "/fleet",
		"https://evil.example/":     "/fleet",
		"javascript:alert(1)":       "/fleet",
		"/%2F%2Fevil.example":       "/%2F%2Fevil.example", // a path of this service, escaped
		"\\\\evil.example":          "/fleet",
		"/ok\x7f":                   "/fleet",
		"http:/evil.example":        "/fleet",
		"/hulls/a b":                "/hulls/a b",
	} {
		if got := safeNext(next); got != want {
			t.Errorf("safeNext(%q) = %q, want %q", next, got, want)
		}
	}
}

// TestSignInThrottleHoldsInParallel: wrong passwords sent at once from
// one address get no more checks than the address's failures allow.
func TestSignInThrottleHoldsInParallel(t *testing.T) {
	f := newFixture(t, Options{MaxUploadBytes: 1 << 20, FailBurst: 3, FailEvery: time.Hour})
	codes := make(chan int, 30)
	var wg sync.WaitGroup
	for i := 0; i < 30; i++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			b := f.browser(t)
			res, _ := b.post("/sign-in", url.Values{"name": {f.names[ledger.RoleOperator]}, "password": {fmt.Sprintf("guess-%d", i)}})
			codes <- res.StatusCode
		}()
	}
	wg.Wait()
	close(codes)
	checked := 0
	for c := range codes {
		switch c {
		case http.StatusUnauthorized:
			checked++
		case http.StatusTooManyRequests:
		default:
			t.Errorf("a wrong sign-in answered %d", c)
		}
	}
	if checked > 3 {
		t.Fatalf("%d wrong passwords were checked at once, want at most the 3 failures allowed", checked)
	}
	// The right password is refused too now: the address has no failure
	// left (the throttle does not tell a right guess from a wrong one).
	b := f.browser(t)
	if res, _ := b.post("/sign-in", url.Values{"name": {f.names[ledger.RoleOperator]}, "password": {f.passwords[ledger.RoleOperator]}}); res.StatusCode != http.StatusTooManyRequests {
		t.Fatalf("a sign-in after the failures: %d", res.StatusCode)
	}
}
