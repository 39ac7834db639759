package web

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"io"
	"log/slog"
	"mime/multipart"
	"net"
	"net/http"
	"net/http/httptest"
	"net/textproto"
	"os"
	"slices"
	"strings"
	"testing"
	"time"

	"github.com/getkin/kin-openapi/openapi3"

	"hulltally/ledger"
	"hulltally/ledger/ledgertest"
	"hulltally/ledger/spec"
)

var srv *ledgertest.Server

func TestMain(m *testing.M) { os.Exit(ledgertest.Main(m, &srv)) }

// TestOpenAPIDescribesEveryRoute: the OpenAPI document is valid OpenAPI 3
// (kin-openapi's validator) and describes exactly the routes served under
// /api/v1, method by method: no route undocumented, none documented that
// is not served.
func TestOpenAPIDescribesEveryRoute(t *testing.T) {
	doc, err := openapi3.NewLoader().LoadFromData(openAPI)
	if err != nil {
		t.Fatal(err)
	}
	if err := doc.Validate(context.Background()); err != nil {
		t.Fatalf("openapi.json is not valid OpenAPI 3: %v", err)
	}
	var documented []string
	for path, item := range doc.Paths.Map() {
		for method := range item.Operations() {
			documented = append(documented, method+" "+path)
		}
	}
	served := []string{"GET /api/v1/openapi.json"}
	for _, r := range apiRoutes(&Server{}) {
		served = append(served, r.pattern)
	}
	slices.Sort(documented)
	slices.Sort(served)
	if !slices.Equal(documented, served) {
		t.Fatalf("documented %v\nserved     %v", documented, served)
	}
}

// fixture is a ledger with one hull, its owner's service on loopback, and
// a token per role.
type fixture struct {
	t      *testing.T
	owner  *ledger.Ledger
	svc    *Server
	http   *httptest.Server
	tokens map[ledger.Role]*ledger.Token
	names  map[ledger.Role]string
	// passwords are the people's generated passwords (to sign in on the
	// pages).
	passwords map[ledger.Role]string
}

const serial = "EX-C4000-01"

func newFixture(t *testing.T, opt Options) *fixture {
	t.Helper()
	ctx := context.Background()
	owner := srv.Open(t)
	data, err := os.ReadFile("../../testdata/hulls/example-cylinder.yaml")
	if err != nil {
		t.Fatal(err)
	}
	h, err := spec.Parse(data)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := owner.AddHull(ctx, h, ledger.AddHullOptions{}); err != nil {
		t.Fatal(err)
	}
	f := &fixture{t: t, owner: owner, tokens: map[ledger.Role]*ledger.Token{}, names: map[ledger.Role]string{}, passwords: map[ledger.Role]string{}}
	for _, r := range []ledger.Role{ledger.RoleInspector, ledger.RoleOperator, ledger.RoleMaintenance} {
		name := fmt.Sprintf("w-%s-%d", r, time.Now().UnixNano()%1e9)
		p, err := owner.AddPerson(ctx, name, r, "")
		if err != nil {
			t.Fatal(err)
		}
		f.passwords[r] = p.Password
		tok, err := owner.CreateToken(ctx, name, 1, "test")
		if err != nil {
			t.Fatal(err)
		}
		f.tokens[r], f.names[r] = tok, name
	}
	f.svc = New(owner, opt, slog.New(slog.NewTextHandler(io.Discard, nil)))
	f.http = httptest.NewServer(f.svc.Handler())
	t.Cleanup(func() {
		f.http.Close()
		f.svc.Close()
		for _, n := range f.names {
			_, _ = owner.Pool().Exec(context.Background(), `DROP ROLE IF EXISTS "`+n+`"`)
		}
	})
	return f
}

// do sends a request with the role's token (none for "") and decodes the
// JSON answer.
func (f *fixture) do(role ledger.Role, method, path string, body io.Reader, ctype string) (int, map[string]any) {
	f.t.Helper()
	req, err := http.NewRequest(method, f.http.URL+path, body)
	if err != nil {
		f.t.Error(err) // Error, not Fatal: the load test calls this from its goroutines
		return 0, nil
	}
	if ctype != "" {
		req.Header.Set("Content-Type", ctype)
	}
	if tok, ok := f.tokens[role]; ok {
		req.Header.Set("Authorization", "Bearer "+tok.Secret)
	}
	res, err := http.DefaultClient.Do(req)
	if err != nil {
		f.t.Error(err)
		return 0, nil
	}
	defer res.Body.Close()
	var doc map[string]any
	b, _ := io.ReadAll(res.Body)
	_ = json.Unmarshal(b, &doc)
	return res.StatusCode, doc
}

func (f *fixture) dives() int64 {
	f.t.Helper()
	var n int64
	if err := f.owner.Pool().QueryRow(context.Background(), "SELECT count(*) FROM dives").Scan(&n); err != nil {
		f.t.Fatal(err)
	}
	return n
}

const diveCSV = `time,depth_m,strain_hoop1_ue,temp_c
2026-05-01T08:00:00Z,0.0,0.0,12.0
2026-05-01T08:00:01Z,20.0,-120.5,11.9
2026-05-01T08:00:02Z,50.0,-301.25,11.5
2026-05-01T08:00:03Z,50.5,-303.0,11.4
2026-05-01T08:00:04Z,30.0,-180.0,11.6
2026-05-01T08:00:05Z,0.3,-1.5,11.9
`

func upload(t *testing.T, samples string) (*bytes.Buffer, string) {
	t.Helper()
	var b bytes.Buffer
	mw := multipart.NewWriter(&b)
	mw.WriteField("lat", "45") // the fields before the samples
	w, err := mw.CreateFormFile("samples", "d.csv")
	if err != nil {
		t.Error(err) // not Fatal: called from the load test's goroutines
		return &b, ""
	}
	io.WriteString(w, samples)
	mw.Close()
	return &b, mw.FormDataContentType()
}

// TestServiceRunsAsThePerson: the service answers as the token's person,
// and the database decides. The adversarial cases: no token, a made-up
// token, an inspector's upload (403, nothing stored), an upload over the
// limit (413, nothing stored), a revoked token, an expired token, the
// token of a disabled person, and an upload cut off mid-way (nothing
// stored).
func TestServiceRunsAsThePerson(t *testing.T) {
	f := newFixture(t, Options{MaxUploadBytes: 64 << 10})
	ctx := context.Background()

	if code, _ := f.do("", "GET", "/healthz", nil, ""); code != 200 {
		t.Fatalf("healthz %d", code)
	}
	if code, _ := f.do("", "GET", "/readyz", nil, ""); code != 200 {
		t.Fatalf("readyz %d", code)
	}
	if code, doc := f.do("", "GET", "/api/v1/fleet", nil, ""); code != 401 || doc["error"] == nil {
		t.Fatalf("fleet without a token: %d %v", code, doc)
	}
	f.tokens["forged"] = &ledger.Token{Secret: "htk_" + strings.Repeat("A", 43)}
	if code, _ := f.do("forged", "GET", "/api/v1/fleet", nil, ""); code != 401 {
		t.Fatalf("fleet with a made-up token: %d", code)
	}

	code, me := f.do(ledger.RoleOperator, "GET", "/api/v1/me", nil, "")
	if code != 200 || me["name"] != f.names[ledger.RoleOperator] || me["role"] != "operator" || me["owner"] != false {
		t.Fatalf("me as the operator: %d %v", code, me)
	}

	before := f.dives()
	body, ct := upload(t, diveCSV)
	code, doc := f.do(ledger.RoleInspector, "POST", "/api/v1/hulls/"+serial+"/dives", body, ct)
	if code != 403 || !strings.Contains(fmt.Sprint(doc["error"]), "not_permitted") || f.dives() != before {
		t.Fatalf("an inspector's upload: %d %v, dives %d → %d", code, doc, before, f.dives())
	}
	body, ct = upload(t, diveCSV)
	code, doc = f.do(ledger.RoleOperator, "POST", "/api/v1/hulls/"+serial+"/dives", body, ct)
	if code != 201 || doc["dive_id"] == nil || f.dives() != before+1 {
		t.Fatalf("the operator's upload: %d %v", code, doc)
	}
	body, ct = upload(t, diveCSV)
	if code, doc = f.do(ledger.RoleOperator, "POST", "/api/v1/hulls/"+serial+"/dives", body, ct); code != 200 || doc["duplicate"] != true {
		t.Fatalf("the same upload again: %d %v", code, doc)
	}
	big := diveCSV + strings.Repeat("# padding to pass the upload limit\n", 4000)
	body, ct = upload(t, big)
	if code, doc = f.do(ledger.RoleOperator, "POST", "/api/v1/hulls/"+serial+"/dives", body, ct); code != 413 || f.dives() != before+1 {
		t.Fatalf("an upload over the limit: %d %v", code, doc)
	}

	for _, path := range []string{"/api/v1/fleet", "/api/v1/hulls/" + serial, "/api/v1/verify"} {
		if code, doc := f.do(ledger.RoleInspector, "GET", path, nil, ""); code != 200 {
			t.Fatalf("GET %s as the inspector: %d %v", path, code, doc)
		}
	}
	code, doc = f.do(ledger.RoleInspector, "GET", "/api/v1/hulls/"+serial+"/clearance?depth_m=100&bottom_min=30", nil, "")
	if code != 200 || doc["go"] == nil || !strings.Contains(fmt.Sprint(doc["caution"]), "classification society") {
		t.Fatalf("clearance: %d %v", code, doc)
	}
	if code, _ = f.do(ledger.RoleInspector, "GET", "/api/v1/hulls/NOPE-1", nil, ""); code != 404 {
		t.Fatalf("an unknown hull: %d", code)
	}

	// A cut-off upload: the headers promise more than is sent, then the
	// connection drops. Nothing is stored.
	cutOff(t, f, f.tokens[ledger.RoleMaintenance].Secret)
	if f.dives() != before+1 {
		t.Fatalf("a cut-off upload stored a dive")
	}

	// Revoked, expired, disabled: refused.
	if err := f.owner.RevokeToken(ctx, f.tokens[ledger.RoleOperator].ID); err != nil {
		t.Fatal(err)
	}
	if code, _ := f.do(ledger.RoleOperator, "GET", "/api/v1/fleet", nil, ""); code != 401 {
		t.Fatalf("a revoked token: %d", code)
	}
	if _, err := f.owner.Pool().Exec(ctx, "UPDATE api_tokens SET created_at = now() - interval '2 days', expires_at = now() - interval '1 second' WHERE id = $1", f.tokens[ledger.RoleInspector].ID); err != nil {
		t.Fatal(err)
	}
	if code, _ := f.do(ledger.RoleInspector, "GET", "/api/v1/fleet", nil, ""); code != 401 {
		t.Fatalf("an expired token: %d", code)
	}
	if code, _ := f.do(ledger.RoleMaintenance, "GET", "/api/v1/fleet", nil, ""); code != 200 {
		t.Fatalf("maintenance before being disabled: %d", code)
	}
	if err := f.owner.DisablePerson(ctx, f.names[ledger.RoleMaintenance]); err != nil {
		t.Fatal(err)
	}
	if code, _ := f.do(ledger.RoleMaintenance, "GET", "/api/v1/fleet", nil, ""); code != 401 {
		t.Fatalf("a disabled person's token: %d", code)
	}

	res, err := http.Get(f.http.URL + "/metrics")
	if err != nil {
		t.Fatal(err)
	}
	m, _ := io.ReadAll(res.Body)
	res.Body.Close()
	for _, want := range []string{"hulltally_http_requests_total", "hulltally_dives_logged_total 1", "hulltally_auth_failures_total"} {
		if !strings.Contains(string(m), want) {
			t.Fatalf("metrics lack %q", want)
		}
	}
	if strings.Contains(string(m), "htk_") {
		t.Fatal("a token in the metrics")
	}
}

// cutOff sends an upload whose body stops half-way and closes the
// connection, then waits until the service has answered for it.
func cutOff(t *testing.T, f *fixture, token string) {
	t.Helper()
	count := func() int {
		res, err := http.Get(f.http.URL + "/metrics")
		if err != nil {
			t.Fatal(err)
		}
		defer res.Body.Close()
		b, _ := io.ReadAll(res.Body)
		n := 0
		for _, line := range strings.Split(string(b), "\n") {
			if strings.HasPrefix(line, `hulltally_http_requests_total{code=`) && strings.Contains(line, `POST /api/v1/hulls/{serial}/dives`) {
				var v int
				fmt.Sscan(line[strings.LastIndexByte(line, ' ')+1:], &v)
				n += v
			}
		}
		return n
	}
	seen := count()
	body, ct := upload(t, diveCSV)
	conn, err := net.Dial("tcp", strings.TrimPrefix(f.http.URL, "http://"))
	if err != nil {
		t.Fatal(err)
	}
	fmt.Fprintf(conn, "POST /api/v1/hulls/%s/dives HTTP/1.1\r\nHost: x\r\nAuthorization: Bearer %s\r\nContent-Type: %s\r\nContent-Length: %d\r\n\r\n", serial, token, ct, body.Len())
	conn.Write(body.Bytes()[:body.Len()/2])
	conn.Close()
	for deadline := time.Now().Add(10 * time.Second); count() == seen; {
		if time.Now().After(deadline) {
			t.Fatal("the service never answered the cut-off upload")
		}
		time.Sleep(20 * time.Millisecond)
	}
}

// TestFailedSignInsAreThrottled: after FailBurst failed sign-ins from an
// address, its requests are refused with 429 before any token is looked
// at — a good token too, so guessing cannot go on at speed — until the
// failures age out.
func TestFailedSignInsAreThrottled(t *testing.T) {
	f := newFixture(t, Options{MaxUploadBytes: 1 << 20, FailBurst: 3, FailEvery: 300 * time.Millisecond})
	f.tokens["forged"] = &ledger.Token{Secret: "htk_" + strings.Repeat("B", 43)}
	for i := range 3 {
		if code, _ := f.do("forged", "GET", "/api/v1/fleet", nil, ""); code != 401 {
			t.Fatalf("failed sign-in %d: %d, want 401", i+1, code)
		}
	}
	if code, _ := f.do("forged", "GET", "/api/v1/fleet", nil, ""); code != 429 {
		t.Fatalf("a fourth failed sign-in at once: %d, want 429", code)
	}
	if code, _ := f.do(ledger.RoleInspector, "GET", "/api/v1/fleet", nil, ""); code != 429 {
		t.Fatalf("a good token from the throttled address: %d, want 429", code)
	}
	time.Sleep(400 * time.Millisecond)
	if code, _ := f.do(ledger.RoleInspector, "GET", "/api/v1/fleet", nil, ""); code != 200 {
		t.Fatalf("a good token once a failure has aged out: %d, want 200", code)
	}
}

// TestMaintenanceRecordsOverHTTP: maintenance records an inspection and a
// decision, each carrying the person as actor; a body naming an actor (or
// any unknown field) is refused, not ignored; an operator's decision and
// an inspector's inspection are refused by the database with nothing
// stored.
func TestMaintenanceRecordsOverHTTP(t *testing.T) {
	f := newFixture(t, Options{MaxUploadBytes: 1 << 20})
	path := "/api/v1/hulls/" + serial
	code, doc := f.do(ledger.RoleMaintenance, "POST", path+"/inspections", strings.NewReader(`{"method": "visual", "result": "pass", "findings": "none"}`), "application/json")
	if code != 201 || doc["actor"] != f.names[ledger.RoleMaintenance] {
		t.Fatalf("an inspection by maintenance: %d %v", code, doc)
	}
	code, doc = f.do(ledger.RoleMaintenance, "POST", path+"/inspections", strings.NewReader(`{"method": "visual", "result": "pass", "actor": "I. Nspector"}`), "application/json")
	if code != 422 {
		t.Fatalf("an inspection naming an actor: %d %v", code, doc)
	}
	count := func(table string) int64 {
		var n int64
		if err := f.owner.Pool().QueryRow(context.Background(), "SELECT count(*) FROM "+table).Scan(&n); err != nil {
			t.Fatal(err)
		}
		return n
	}
	decisions, inspections := count("decisions"), count("inspections")
	if code, doc = f.do(ledger.RoleOperator, "POST", path+"/decisions", strings.NewReader(`{"kind": "return_to_service", "reason": "looks fine"}`), "application/json"); code != 403 || count("decisions") != decisions {
		t.Fatalf("an operator's decision: %d %v", code, doc)
	}
	if code, doc = f.do(ledger.RoleInspector, "POST", path+"/inspections", strings.NewReader(`{"method": "visual", "result": "pass"}`), "application/json"); code != 403 || count("inspections") != inspections {
		t.Fatalf("an inspector's inspection: %d %v", code, doc)
	}
	code, doc = f.do(ledger.RoleMaintenance, "POST", path+"/decisions", strings.NewReader(`{"kind": "withdraw", "reason": "ultrasonic survey due"}`), "application/json")
	if code != 201 || doc["actor"] != f.names[ledger.RoleMaintenance] || doc["kind"] != "withdraw" {
		t.Fatalf("a decision by maintenance: %d %v", code, doc)
	}
	code, doc = f.do(ledger.RoleInspector, "GET", path, nil, "")
	hull, _ := doc["hull"].(map[string]any)
	fit, _ := hull["fitness"].(map[string]any)
	if code != 200 || fit["status"] != "withdrawn" {
		t.Fatalf("the hull after a withdrawal, read by the inspector: %d, status %v, want withdrawn", code, fit["status"])
	}
}

// TestReportsOverHTTP: maintenance downloads a hull's report (a PDF);
// an inspector uploads it and learns it matches the ledger; after a new
// dive the same upload no longer matches (never "still valid"); a
// non-PDF upload is refused; an operator may not issue a report.
func TestReportsOverHTTP(t *testing.T) {
	f := newFixture(t, Options{MaxUploadBytes: 1 << 20})
	body, ct := upload(t, diveCSV)
	if code, doc := f.do(ledger.RoleOperator, "POST", "/api/v1/hulls/"+serial+"/dives", body, ct); code != 201 {
		t.Fatalf("upload: %d %v", code, doc)
	}
	get := func(role ledger.Role, path string) (int, []byte, http.Header) {
		req, _ := http.NewRequest("GET", f.http.URL+path, nil)
		req.Header.Set("Authorization", "Bearer "+f.tokens[role].Secret)
		res, err := http.DefaultClient.Do(req)
		if err != nil {
			t.Fatal(err)
		}
		defer res.Body.Close()
		b, _ := io.ReadAll(res.Body)
		return res.StatusCode, b, res.Header
	}
	code, pdf, h := get(ledger.RoleMaintenance, "/api/v1/hulls/"+serial+"/report")
	if code != 200 || !bytes.HasPrefix(pdf, []byte("%PDF-")) || h.Get("Content-Type") != "application/pdf" || h.Get("X-Report-Fingerprint") == "" {
		t.Fatalf("the hull report: %d, %d bytes, %v", code, len(pdf), h)
	}
	if code, _, _ := get(ledger.RoleOperator, "/api/v1/hulls/"+serial+"/report"); code != 403 {
		t.Fatalf("an operator issuing a report: %d, want 403", code)
	}
	code, v := f.do(ledger.RoleInspector, "POST", "/api/v1/reports/verify", bytes.NewReader(pdf), "application/pdf")
	if code != 200 || v["ok"] != true {
		t.Fatalf("verifying the fresh report: %d %v", code, v)
	}
	day := strings.ReplaceAll(diveCSV, "2026-05-01", "2026-05-02")
	body, ct = upload(t, day)
	if code, doc := f.do(ledger.RoleOperator, "POST", "/api/v1/hulls/"+serial+"/dives", body, ct); code != 201 {
		t.Fatalf("a second dive: %d %v", code, doc)
	}
	code, v = f.do(ledger.RoleInspector, "POST", "/api/v1/reports/verify", bytes.NewReader(pdf), "application/pdf")
	if code != 200 || v["ok"] != false {
		t.Fatalf("verifying the report after a new dive: %d %v, want ok false", code, v)
	}
	if code, v = f.do(ledger.RoleInspector, "POST", "/api/v1/reports/verify", strings.NewReader("not a pdf"), "application/pdf"); code != 422 && !(code == 200 && v["ok"] == false) {
		t.Fatalf("verifying a non-PDF: %d %v", code, v)
	}
}

// TestRequestsRefusedNotBent: what review found bent instead of refused —
// a key in another letter case or given twice, a trailing bracket, an
// upload field too long, not UTF-8 or given twice, a file name with
// control characters or "..", HEAD on a route that records, a non-finite
// bottom time — each answered 4xx with nothing stored, or stored under a
// plain name.
func TestRequestsRefusedNotBent(t *testing.T) {
	f := newFixture(t, Options{MaxUploadBytes: 1 << 20})
	path := "/api/v1/hulls/" + serial
	for _, body := range []string{
		`{"kind": "withdraw", "reason": "crack", "KIND": "return_to_service"}`,
		`{"kind": "withdraw", "reason": "crack", "kind": "return_to_service"}`,
		`{"kind": "withdraw", "reason": "crack"}]`,
		`{"kind": "withdraw", "reason": "crack"}}`,
		`{"kind": "withdraw", "reason": "crack"} {"kind": "return_to_service"}`,
		`["withdraw"]`,
	} {
		if code, doc := f.do(ledger.RoleMaintenance, "POST", path+"/decisions", strings.NewReader(body), "application/json"); code != 422 {
			t.Fatalf("decision body %s: %d %v, want 422", body, code, doc)
		}
	}
	dives := f.dives()
	field := func(name, value string) (*bytes.Buffer, string) {
		var b bytes.Buffer
		mw := multipart.NewWriter(&b)
		mw.WriteField(name, value)
		if name == "operator" {
			mw.WriteField(name, "someone else")
		}
		w, _ := mw.CreateFormFile("samples", "d.csv")
		io.WriteString(w, diveCSV)
		mw.Close()
		return &b, mw.FormDataContentType()
	}
	for _, c := range []struct{ name, value string }{
		{"site", strings.Repeat("x", 1100)},
		{"site", "caf\xc3"},
		{"operator", "first"},
	} {
		body, ct := field(c.name, c.value)
		if code, doc := f.do(ledger.RoleOperator, "POST", path+"/dives", body, ct); code != 422 || f.dives() != dives {
			t.Fatalf("upload with %s %.20q: %d %v", c.name, c.value, code, doc)
		}
	}
	for _, disp := range []string{`filename=".."`, "filename*=UTF-8''dive%1B%5B31m%0Afake%20line.csv", `filename="` + strings.Repeat("n", 300) + `"`} {
		name := disp
		var b bytes.Buffer
		mw := multipart.NewWriter(&b)
		h := textproto.MIMEHeader{}
		h.Set("Content-Disposition", `form-data; name="samples"; `+disp)
		w, _ := mw.CreatePart(h)
		io.WriteString(w, strings.ReplaceAll(diveCSV, "08:00", fmt.Sprintf("%02d:00", 9+len(name)%10)))
		mw.Close()
		code, doc := f.do(ledger.RoleOperator, "POST", path+"/dives", &b, mw.FormDataContentType())
		if code != 201 || doc["source"] != "samples.csv" {
			t.Fatalf("upload named %.20q: %d, stored as %v, want 201 as samples.csv", name, code, doc["source"])
		}
	}
	req, _ := http.NewRequest("HEAD", f.http.URL+path+"/report", nil)
	req.Header.Set("Authorization", "Bearer "+f.tokens[ledger.RoleMaintenance].Secret)
	var issued int64
	count := func() int64 {
		var n int64
		if err := f.owner.Pool().QueryRow(context.Background(), "SELECT count(*) FROM issued_reports").Scan(&n); err != nil {
			t.Fatal(err)
		}
		return n
	}
	issued = count()
	res, err := http.DefaultClient.Do(req)
	if err != nil {
		t.Fatal(err)
	}
	res.Body.Close()
	if res.StatusCode != 405 || count() != issued {
		t.Fatalf("HEAD on a report: %d, reports issued %d → %d", res.StatusCode, issued, count())
	}
	if code, _ := f.do(ledger.RoleInspector, "GET", path+"/clearance?depth_m=100&bottom_min=Inf", nil, ""); code != 422 {
		t.Fatalf("clearance with an infinite bottom time: %d, want 422", code)
	}
}

// open says whether the service holds connections for the person.
func (s *Server) open(person string) bool {
	s.mu.Lock()
	defer s.mu.Unlock()
	_, ok := s.people[person]
	return ok
}

// TestDisabledPersonsConnectionsClosed: once a person is disabled, the
// service closes the connections it holds for them (the sweep), besides
// refusing their token at once.
func TestDisabledPersonsConnectionsClosed(t *testing.T) {
	f := newFixture(t, Options{MaxUploadBytes: 1 << 20, SweepEvery: 50 * time.Millisecond})
	name := f.names[ledger.RoleMaintenance]
	if code, _ := f.do(ledger.RoleMaintenance, "GET", "/api/v1/fleet", nil, ""); code != 200 || !f.svc.open(name) {
		t.Fatalf("before: %d, connections held %v", code, f.svc.open(name))
	}
	// An upload of the person's in progress (its sender slow): ended when
	// the person is disabled, nothing of it stored.
	dives := f.dives()
	conn, err := net.Dial("tcp", strings.TrimPrefix(f.http.URL, "http://"))
	if err != nil {
		t.Fatal(err)
	}
	defer conn.Close()
	body := "--b\r\nContent-Disposition: form-data; name=\"samples\"; filename=\"d.csv\"\r\n\r\n" + diveCSV[:len(diveCSV)/2]
	fmt.Fprintf(conn, "POST /api/v1/hulls/%s/dives HTTP/1.1\r\nHost: x\r\nAuthorization: Bearer %s\r\nContent-Type: multipart/form-data; boundary=b\r\nContent-Length: %d\r\n\r\n%s",
		serial, f.tokens[ledger.RoleMaintenance].Secret, 10*len(body), body)
	time.Sleep(300 * time.Millisecond)
	if err := f.owner.DisablePerson(context.Background(), name); err != nil {
		t.Fatal(err)
	}
	conn.SetReadDeadline(time.Now().Add(10 * time.Second))
	answer, _ := io.ReadAll(conn)
	if !strings.Contains(string(answer), "401") || strings.Contains(string(answer), "201 Created") {
		t.Fatalf("the disabled person's upload in progress was answered:\n%s", answer)
	}
	if f.dives() != dives {
		t.Fatal("the disabled person's upload in progress was stored")
	}
	if code, _ := f.do(ledger.RoleMaintenance, "GET", "/api/v1/fleet", nil, ""); code != 401 {
		t.Fatalf("a disabled person's request: %d, want 401", code)
	}
	for deadline := time.Now().Add(5 * time.Second); f.svc.open(name); time.Sleep(20 * time.Millisecond) {
		if time.Now().After(deadline) {
			t.Fatal("the disabled person's connections are still held")
		}
	}
	if !f.svc.open(f.names[ledger.RoleInspector]) {
		if code, _ := f.do(ledger.RoleInspector, "GET", "/api/v1/fleet", nil, ""); code != 200 {
			t.Fatalf("another person after the sweep: %d", code)
		}
	}
}

// TestUploadPartsInOrder: the samples stream into the parse, so the
// dive's fields must come first; a hits file may come before or right
// after the samples. The adversarial cases store nothing: a field after
// the samples (it would otherwise be ignored, or change a dive already
// parsed), a second hits file, and an unknown part after the samples.
func TestUploadPartsInOrder(t *testing.T) {
	f := newFixture(t, Options{MaxUploadBytes: 1 << 20})
	path := "/api/v1/hulls/" + serial + "/dives"
	const hits = "time,channel,amplitude_db,energy,counts,duration_us,rise_us\n2026-05-01T08:00:02Z,1,60,5,10,100,10\n"
	type part struct{ name, value string }
	body := func(day string, parts ...part) (*bytes.Buffer, string) {
		var b bytes.Buffer
		mw := multipart.NewWriter(&b)
		for _, p := range parts {
			switch p.name {
			case "samples", "hits":
				w, _ := mw.CreateFormFile(p.name, p.name+".csv")
				io.WriteString(w, strings.ReplaceAll(p.value, "2026-05-01", day))
			default:
				mw.WriteField(p.name, p.value)
			}
		}
		mw.Close()
		return &b, mw.FormDataContentType()
	}
	lat, samples, hitsPart := part{"lat", "45"}, part{"samples", diveCSV}, part{"hits", hits}
	for _, c := range []struct {
		name  string
		day   string
		parts []part
		code  int
	}{
		{"fields, samples, hits", "2026-05-01", []part{lat, samples, hitsPart}, 201},
		{"hits, fields, samples", "2026-05-02", []part{hitsPart, lat, samples}, 201},
		{"a field after the samples", "2026-05-03", []part{samples, lat}, 422},
		{"two hits files", "2026-05-04", []part{lat, samples, hitsPart, hitsPart}, 422},
		{"hits before and after", "2026-05-05", []part{hitsPart, samples, hitsPart}, 422},
		{"an unknown part after the samples", "2026-05-06", []part{samples, {"note", "x"}}, 422},
	} {
		before := f.dives()
		b, ct := body(c.day, c.parts...)
		code, doc := f.do(ledger.RoleOperator, "POST", path, b, ct)
		if code != c.code {
			t.Errorf("%s: %d %v, want %d", c.name, code, doc, c.code)
		}
		want := before
		if c.code == 201 {
			want++
			if doc["ae_hits"] != float64(1) || doc["status_after"] == nil || doc["recorded_by"] != f.names[ledger.RoleOperator] {
				t.Errorf("%s: the answer %v", c.name, doc)
			}
		}
		if got := f.dives(); got != want {
			t.Errorf("%s: dives %d → %d, want %d", c.name, before, got, want)
		}
	}
}

// TestProofTestWithSamplesOverHTTP: maintenance records a proof test with
// its data-logger file in one upload; the samples are logged as a dive of
// the hull in the same transaction. The adversarial cases store nothing:
// an operator's upload (the database refuses), a recorded pressure the
// samples contradict, and a field after the samples.
func TestProofTestWithSamplesOverHTTP(t *testing.T) {
	f := newFixture(t, Options{MaxUploadBytes: 1 << 20})
	path := "/api/v1/hulls/" + serial + "/proof-tests"
	var csv strings.Builder
	csv.WriteString("time,pressure_mpa\n")
	t0 := time.Date(2026, 4, 2, 9, 0, 0, 0, time.UTC)
	for s := 0; s <= 900; s += 5 {
		p := 50.0
		switch {
		case s < 300:
			p = 50 * float64(s) / 300
		case s > 600:
			p = 50 * float64(900-s) / 300
		}
		fmt.Fprintf(&csv, "%s,%.3f\n", t0.Add(time.Duration(s)*time.Second).Format(time.RFC3339), p)
	}
	body := func(fields [][2]string, after ...[2]string) (*bytes.Buffer, string) {
		var b bytes.Buffer
		mw := multipart.NewWriter(&b)
		for _, kv := range fields {
			mw.WriteField(kv[0], kv[1])
		}
		w, _ := mw.CreateFormFile("samples", "proof.csv")
		io.WriteString(w, csv.String())
		for _, kv := range after {
			mw.WriteField(kv[0], kv[1])
		}
		mw.Close()
		return &b, mw.FormDataContentType()
	}
	count := func() int64 {
		var n int64
		if err := f.owner.Pool().QueryRow(context.Background(), "SELECT count(*) FROM proof_tests").Scan(&n); err != nil {
			t.Fatal(err)
		}
		return n
	}
	pass := [][2]string{{"pressure_mpa", "50"}, {"result", "pass"}, {"notes", "yard test"}}
	for _, c := range []struct {
		name   string
		role   ledger.Role
		fields [][2]string
		after  [][2]string
		code   int
	}{
		{"an operator", ledger.RoleOperator, pass, nil, 403},
		{"a pressure the samples contradict", ledger.RoleMaintenance, [][2]string{{"pressure_mpa", "60"}, {"result", "pass"}}, nil, 422},
		{"a field after the samples", ledger.RoleMaintenance, [][2]string{{"result", "pass"}}, [][2]string{{"pressure_mpa", "50"}}, 422},
		{"an unknown field", ledger.RoleMaintenance, append([][2]string{{"actor", "someone"}}, pass...), nil, 422},
	} {
		b, ct := body(c.fields, c.after...)
		dives, tests := f.dives(), count()
		if code, doc := f.do(c.role, "POST", path, b, ct); code != c.code || f.dives() != dives || count() != tests {
			t.Errorf("%s: %d %v (dives %d → %d, proof tests %d → %d), want %d and nothing stored", c.name, code, doc, dives, f.dives(), tests, count(), c.code)
		}
	}
	b, ct := body(pass)
	dives := f.dives()
	code, doc := f.do(ledger.RoleMaintenance, "POST", path, b, ct)
	if code != 201 || doc["dive_id"] == nil || doc["actor"] != f.names[ledger.RoleMaintenance] || doc["pressure_mpa"] != 50.0 || f.dives() != dives+1 {
		t.Fatalf("maintenance's proof test with samples: %d %v", code, doc)
	}
}

// TestStalledUploadCutOff: a sender that stops sending midway through its
// samples is cut off after StallTimeout and stores nothing; an upload
// that comes meanwhile, when every turn is taken, is spooled while it
// waits and then logged.
func TestStalledUploadCutOff(t *testing.T) {
	f := newFixture(t, Options{MaxUploadBytes: 1 << 20, MaxIngests: 1, StallTimeout: time.Second})
	before := f.dives()
	conn, err := net.Dial("tcp", strings.TrimPrefix(f.http.URL, "http://"))
	if err != nil {
		t.Fatal(err)
	}
	defer conn.Close()
	stalledDive := strings.ReplaceAll(diveCSV, "2026-05-01", "2026-05-11")
	body := "--b\r\nContent-Disposition: form-data; name=\"lat\"\r\n\r\n45\r\n--b\r\nContent-Disposition: form-data; name=\"samples\"; filename=\"d.csv\"\r\n\r\n" + stalledDive[:len(stalledDive)/2]
	fmt.Fprintf(conn, "POST /api/v1/hulls/%s/dives HTTP/1.1\r\nHost: x\r\nAuthorization: Bearer %s\r\nContent-Type: multipart/form-data; boundary=b\r\nContent-Length: %d\r\n\r\n%s",
		serial, f.tokens[ledger.RoleOperator].Secret, 10*len(body), body)
	time.Sleep(200 * time.Millisecond) // the stalled upload holds the only turn
	start := time.Now()
	b, ct := upload(t, diveCSV)
	code, doc := f.do(ledger.RoleOperator, "POST", "/api/v1/hulls/"+serial+"/dives", b, ct)
	if code != 201 {
		t.Fatalf("the upload behind a stalled one: %d %v", code, doc)
	}
	if waited := time.Since(start); waited > 15*time.Second {
		t.Fatalf("the upload behind a stalled one waited %v", waited)
	}
	conn.SetReadDeadline(time.Now().Add(10 * time.Second))
	answer, _ := io.ReadAll(conn)
	if strings.Contains(string(answer), "201 Created") {
		t.Fatalf("the stalled upload was answered as stored:\n%s", answer)
	}
	if got := f.dives(); got != before+1 {
		t.Fatalf("dives %d → %d, want only the complete upload", before, got)
	}
}

// TestPersonsWritesKeepTheSummary: a person may not write the fleet
// summary, so the service writes it, as the owner, after the person's
// write: the fleet is then read from summaries that stand, not evaluated
// hull by hull at every look, and says the same as an evaluation.
func TestPersonsWritesKeepTheSummary(t *testing.T) {
	f := newFixture(t, Options{MaxUploadBytes: 1 << 20})
	b, ct := upload(t, diveCSV)
	if code, doc := f.do(ledger.RoleOperator, "POST", "/api/v1/hulls/"+serial+"/dives", b, ct); code != 201 {
		t.Fatalf("upload: %d %v", code, doc)
	}
	code, doc := f.do(ledger.RoleInspector, "GET", "/api/v1/fleet", nil, "")
	hulls, _ := doc["hulls"].([]any)
	if code != 200 || len(hulls) != 1 {
		t.Fatalf("fleet: %d %v", code, doc)
	}
	row := hulls[0].(map[string]any)
	if row["from_summary"] != true {
		t.Fatalf("after an operator's dive the fleet row is not from a summary that stands: %v", row)
	}
	h, err := f.owner.Hull(context.Background(), serial)
	if err != nil {
		t.Fatal(err)
	}
	fit, err := f.owner.FitnessAt(context.Background(), h, time.Now().UTC())
	if err != nil {
		t.Fatal(err)
	}
	if row["status"] != fit.Status || len(row["reasons"].([]any)) != len(fit.Reasons) {
		t.Fatalf("the summary says %v with %d reasons, an evaluation %s with %d", row["status"], len(row["reasons"].([]any)), fit.Status, len(fit.Reasons))
	}
}

// TestReadsOverHTTP: the hull list, a hull's dives and one dive, as the
// command line's --json prints them, for any role; an unknown hull or
// dive is 404, never an empty answer that reads as "nothing recorded".
func TestReadsOverHTTP(t *testing.T) {
	f := newFixture(t, Options{MaxUploadBytes: 1 << 20})
	b, ct := upload(t, diveCSV)
	code, doc := f.do(ledger.RoleOperator, "POST", "/api/v1/hulls/"+serial+"/dives", b, ct)
	if code != 201 {
		t.Fatalf("upload: %d %v", code, doc)
	}
	id, _ := doc["dive_id"].(string)
	code, doc = f.do(ledger.RoleInspector, "GET", "/api/v1/hulls", nil, "")
	if hs, _ := doc["hulls"].([]any); code != 200 || len(hs) != 1 || hs[0].(map[string]any)["serial"] != serial || doc["caution"] == nil {
		t.Fatalf("hull list: %d %v", code, doc)
	}
	code, doc = f.do(ledger.RoleInspector, "GET", "/api/v1/hulls/"+serial+"/dives", nil, "")
	if ds, _ := doc["dives"].([]any); code != 200 || len(ds) != 1 || ds[0].(map[string]any)["dive_id"] != id {
		t.Fatalf("dive list: %d %v", code, doc)
	}
	code, doc = f.do(ledger.RoleInspector, "GET", "/api/v1/dives/"+id[:8], nil, "")
	if code != 200 || doc["dive_id"] != id || doc["pressure_cycles"] == nil || doc["recorded_by"] != f.names[ledger.RoleOperator] {
		t.Fatalf("one dive: %d %v", code, doc)
	}
	for _, p := range []string{"/api/v1/hulls/NO-SUCH/dives", "/api/v1/dives/00000000-0000-4000-8000-000000000000", "/api/v1/dives/not-an-id"} {
		if code, doc := f.do(ledger.RoleInspector, "GET", p, nil, ""); code != 404 {
			t.Errorf("GET %s: %d %v, want 404", p, code, doc)
		}
	}
}
