package client

import (
	"context"
	"errors"
	"io"
	"net/http"
	"net/http/httptest"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"hulltally/ledger"
)

// TestNewRefusesUnsafeAddresses: the token may cross a network only
// encrypted, and only to the address configured.
func TestNewRefusesUnsafeAddresses(t *testing.T) {
	cases := []struct {
		url, token string
		ok         bool
	}{
		{"https://hulltally.example:8686", "htk_x", true},
		{"https://hulltally.example/", "htk_x", true},
		{"http://127.0.0.1:8686", "htk_x", true},
		{"http://[::1]:8686", "htk_x", true},
		{"http://localhost:8686", "htk_x", true},
		{"http://192.0.2.10:8686", "htk_x", false},      // clear text across a network
		{"http://127.0.0.1.example:80", "htk_x", false}, // not loopback, only named so
		{"ftp://127.0.0.1", "htk_x", false},
		{"127.0.0.1:8686", "htk_x", false},
		{"https://u:pw@hulltally.example", "htk_x", false},
		{"https://hulltally.example?token=x", "htk_x", false},
		{"https://hulltally.example", "  ", false},
		{"https://", "htk_x", false},
	}
	for _, c := range cases {
		_, err := New(c.url, c.token, nil)
		if (err == nil) != c.ok {
			t.Errorf("New(%q, %q): %v; want ok=%v", c.url, c.token, err, c.ok)
		}
		if err != nil && !errors.Is(err, ErrConfig) {
			t.Errorf("New(%q): %v is not ErrConfig", c.url, err)
		}
		if err != nil && strings.Contains(err.Error(), "pw") {
			t.Errorf("New(%q): the password is in the error: %v", c.url, err)
		}
	}
}

// TestAnswers: the service's error document becomes an *Error with its
// kind; an answer that is not the service's is a failure, never a value;
// a redirect is not followed (the token stays with the address
// configured).
func TestAnswers(t *testing.T) {
	var sawToken []string
	other := httptest.NewServer(http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		sawToken = append(sawToken, r.Header.Get("Authorization"))
	}))
	defer other.Close()
	srv := httptest.NewServer(http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		switch r.URL.Path {
		case "/api/v1/hulls/NONE/clearance":
			w.Header().Set("Content-Type", "application/json")
			w.WriteHeader(http.StatusNotFound)
			w.Write([]byte(`{"error":{"kind":"input","message":"unknown hull NONE"}}`))
		case "/api/v1/fleet":
			http.Redirect(w, r, other.URL+"/api/v1/fleet", http.StatusTemporaryRedirect)
		default:
			w.Header().Set("Content-Type", "text/html")
			w.Write([]byte("<html>a proxy's page</html>"))
		}
	}))
	defer srv.Close()
	c, err := New(srv.URL, "htk_secret", nil)
	if err != nil {
		t.Fatal(err)
	}
	ctx := context.Background()
	_, _, err = c.Clear(ctx, "NONE", 100, 0)
	var e *Error
	if !errors.As(err, &e) || e.Kind != "input" || e.Status != 404 || e.Message != "unknown hull NONE" {
		t.Errorf("unknown hull: %#v", err)
	}
	if _, _, err := c.Fleet(ctx); err == nil {
		t.Error("a redirect was taken for an answer")
	}
	if len(sawToken) != 0 {
		t.Errorf("the redirect's target was asked, with %q", sawToken)
	}
	if v, _, err := c.Clear(ctx, "EX", 100, 0); err == nil || v != nil {
		t.Errorf("an HTML page was taken for a clearance: %v %v", v, err)
	}
	if _, _, err := c.VerifyReport(ctx, "/no/such/report.pdf"); !errors.As(err, &e) || e.Kind != "input" {
		t.Errorf("a missing report file: %v", err)
	}
}

// TestLogDiveFileChanging: a samples file that grows while it is sent (a
// logger still writing) is not sent as a whole dive: the upload is cut
// before its closing boundary, so the service can store nothing, and the
// command is told why.
func TestLogDiveFileChanging(t *testing.T) {
	complete := make(chan bool, 1)
	srv := httptest.NewServer(http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		mr, err := r.MultipartReader()
		if err != nil {
			complete <- false
			return
		}
		for {
			p, err := mr.NextPart()
			if err == io.EOF {
				complete <- true
				break
			}
			if err != nil {
				complete <- false
				return
			}
			io.Copy(io.Discard, p)
		}
		w.Header().Set("Content-Type", "application/json")
		w.WriteHeader(201)
		w.Write([]byte(`{"dive_id":"00000000-0000-0000-0000-000000000000"}`))
	}))
	defer srv.Close()
	c, err := New(srv.URL, "htk_x", nil)
	if err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(t.TempDir(), "dive.csv")
	if err := os.WriteFile(path, []byte("time,depth_m\n2026-05-01T08:00:00Z,0\n2026-05-01T08:10:00Z,300\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	grow := func(int64) {
		f, err := os.OpenFile(path, os.O_APPEND|os.O_WRONLY, 0)
		if err == nil {
			f.WriteString("2026-05-01T08:20:00Z,0\n")
			f.Close()
		}
	}
	_, _, err = c.LogDive(context.Background(), ledger.LogRequest{Hull: "EX", Samples: path}, grow)
	var e *Error
	if !errors.As(err, &e) || e.Kind != "input" || !strings.Contains(e.Message, "changed while it was being sent") {
		t.Fatalf("a file that grew while sent: %v", err)
	}
	if <-complete {
		t.Fatal("the service received a complete upload of a file that was still growing")
	}
	// The same file, left alone, goes whole.
	if _, _, err := c.LogDive(context.Background(), ledger.LogRequest{Hull: "EX", Samples: path}, nil); err != nil || !<-complete {
		t.Fatalf("an unchanging file: %v", err)
	}
}
