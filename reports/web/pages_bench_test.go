package web

import (
	"context"
	"io"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"os"
	"slices"
	"testing"
	"time"

	"hulltally/ledger"
	"hulltally/ledger/ledgertest"
	"hulltally/ledger/spec"
)

// BenchmarkPages times the fleet page of a fleet of 1 000 hulls and the
// page of a hull of 10 000 dives, served over loopback against a real
// PostgreSQL as a signed-in maintenance person, with the API's JSON of
// the same content as the baseline in the same run. The dives are copied
// into the tables (ledgertest.CopyFleet: cycles and holds, no readings
// nor evidence), assessed, and the fleet summaries written, as after
// the owner's writes. Each sub-benchmark reports its median request
// time (ms-median); run it for 20 requests each:
//
//	go test -run XXX -bench Pages -benchtime 20x ./reports/web/
func BenchmarkPages(b *testing.B) {
	ctx := context.Background()
	owner := srv.Open(b)
	data, err := os.ReadFile("../../testdata/hulls/example-cylinder.yaml")
	if err != nil {
		b.Fatal(err)
	}
	sp, err := spec.Parse(data)
	if err != nil {
		b.Fatal(err)
	}
	t0 := time.Now()
	ledgertest.CopyFleet(b, owner, sp, "FLEET", 1000, func(int) int { return 1 })
	ledgertest.CopyFleet(b, owner, sp, "LONG", 1, func(int) int { return 10000 })
	if _, err := owner.Assess(ctx, ledger.AssessOptions{Reason: "benchmark"}); err != nil {
		b.Fatal(err)
	}
	if _, err := owner.RebuildFleetSummary(ctx, time.Now().UTC(), 0); err != nil {
		b.Fatal(err)
	}
	b.Logf("fleet of 1 001 hulls (one of 10 000 dives) built in %.1f s", time.Since(t0).Seconds())
	p, err := owner.AddPerson(ctx, "bench-pages", ledger.RoleMaintenance, "")
	if err != nil {
		b.Fatal(err)
	}
	b.Cleanup(func() { _, _ = owner.Pool().Exec(context.Background(), `DROP ROLE IF EXISTS "bench-pages"`) })
	session, err := owner.SignIn(ctx, p.Name, p.Password)
	if err != nil {
		b.Fatal(err)
	}
	svc := New(owner, Options{}, slog.New(slog.NewTextHandler(io.Discard, nil)))
	hs := httptest.NewServer(svc.Handler())
	b.Cleanup(func() { hs.Close(); svc.Close() })
	for _, c := range []struct {
		name, path string
		page       bool
	}{
		{"fleet page, 1000 hulls", "/fleet", true},
		{"fleet API, 1000 hulls", "/api/v1/fleet", false},
		{"hull page, 10000 dives", "/hulls/LONG-000", true},
		{"hull API, 10000 dives", "/api/v1/hulls/LONG-000", false},
	} {
		get := func() time.Duration {
			req, _ := http.NewRequest("GET", hs.URL+c.path, nil)
			if c.page {
				req.AddCookie(&http.Cookie{Name: sessionCookie, Value: session.Secret})
			} else {
				req.Header.Set("Authorization", "Bearer "+session.Secret)
			}
			t := time.Now()
			res, err := http.DefaultClient.Do(req)
			if err != nil {
				b.Fatal(err)
			}
			_, _ = io.Copy(io.Discard, res.Body)
			res.Body.Close()
			if res.StatusCode != 200 {
				b.Fatalf("GET %s: %s", c.path, res.Status)
			}
			return time.Since(t)
		}
		get() // warm
		b.Run(c.name, func(b *testing.B) {
			var ms []float64
			for b.Loop() {
				ms = append(ms, float64(get().Microseconds())/1000)
			}
			slices.Sort(ms)
			b.ReportMetric(ms[len(ms)/2], "ms-median")
		})
	}
}
