package ledger_test

import (
	"context"
	"errors"
	"fmt"
	"hulltally/fatigue/seawater"
	"math"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/jackc/pgx/v5"

	"hulltally/configs"
	"hulltally/ledger"
	"hulltally/ledger/ledgertest"
	"hulltally/ledger/spec"
)

var srv *ledgertest.Server

func TestMain(m *testing.M) { os.Exit(ledgertest.Main(m, &srv)) }

const serial = "EX-C4000-01"

// newLedger opens a ledger on a fresh database with the example hull.
func newLedger(t *testing.T, blockSamples int) *ledger.Ledger {
	t.Helper()
	cfg := ledgertest.Config(t, srv.NewDatabase(t, true))
	if blockSamples > 0 {
		cfg.Ingest.BlockSamples = blockSamples
	}
	l, err := ledger.Open(context.Background(), cfg)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(l.Close)
	addExampleHull(t, l)
	return l
}

func addExampleHull(t testing.TB, l *ledger.Ledger) {
	t.Helper()
	if _, err := l.AddHull(context.Background(), exampleSpec(t), ledger.AddHullOptions{}); err != nil {
		t.Fatal(err)
	}
}

func exampleSpec(t testing.TB) *spec.Hull {
	t.Helper()
	data, err := os.ReadFile("../testdata/hulls/example-cylinder.yaml")
	if err != nil {
		t.Fatal(err)
	}
	h, err := spec.Parse(data)
	if err != nil {
		t.Fatal(err)
	}
	return h
}

func testConfig(t testing.TB) *configs.Config {
	return ledgertest.Config(t, srv.NewDatabase(t, true))
}

func mustTime(s string) time.Time {
	t, err := time.Parse(time.RFC3339, s)
	if err != nil {
		panic(err)
	}
	return t
}

var ledgerTables = []string{"hulls", "hull_revisions", "hull_components", "gauges", "dives", "reading_blocks", "ae_hits", "corrections", "audit_chain",
	"dive_cycles", "dive_holds", "assessments", "assessment_damage",
	"dive_profiles", "dive_evidence", "inspections", "proof_tests", "decisions", "status_history", "issued_reports",
	"evidence_revisions", "dive_voids", "dive_fingerprints", "checkpoints"}

func rowCounts(t *testing.T, l *ledger.Ledger) map[string]int64 {
	t.Helper()
	out := map[string]int64{}
	for _, tb := range ledgerTables {
		var n int64
		if err := l.Pool().QueryRow(context.Background(), "SELECT count(*) FROM "+tb).Scan(&n); err != nil {
			t.Fatal(err)
		}
		out[tb] = n
	}
	return out
}

func writeFile(t *testing.T, name, content string) string {
	t.Helper()
	p := filepath.Join(t.TempDir(), name)
	if err := os.WriteFile(p, []byte(content), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

// goodDive is a short valid dive: 0 -> 50 m -> 0 over 6 s.
const goodDive = `# a short dive
time,depth_m,strain_hoop1_ue,temp_c
2026-05-01T08:00:00Z,0.0,0.0,12.0
2026-05-01T08:00:01Z,20.0,-120.5,11.9
2026-05-01T08:00:02Z,50.0,-301.25,11.5
2026-05-01T08:00:03Z,50.5,-303.0,11.4
2026-05-01T08:00:04Z,30.0,-180.0,11.6
2026-05-01T08:00:05Z,0.3,-1.5,11.9
`

const goodHits = `time,channel,amplitude_db,energy,counts,duration_us,rise_us
2026-05-01T08:00:02.5Z,1,52.0,310.5,14,420,35
2026-05-01T08:00:03Z,2,61.5,1200,40,900,60
`

func TestLogDive(t *testing.T) {
	l := newLedger(t, 0)
	ctx := context.Background()
	lat := 30.0
	d, err := l.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: writeFile(t, "d.csv", goodDive), AE: writeFile(t, "h.csv", goodHits), Latitude: &lat, Site: "Test basin", Operator: "A. Tester"})
	if err != nil {
		t.Fatal(err)
	}
	if d.Duplicate || d.Samples != 6 || d.MaxDepthM != 50.5 || d.AEHits != 2 || d.BeyondRated || d.LatitudeAssumed {
		t.Fatalf("dive %+v", d)
	}
	// 50.5 m at 30°: UNESCO 1983 inverted gives about 50.85 dbar (10 m of
	// seawater is a little over 1 dbar-per-metre; independent check: the
	// same function's forward depth returns 50.5 m).
	if d.MaxPressureMPa < 0.505 || d.MaxPressureMPa > 0.512 {
		t.Errorf("max pressure %v MPa for 50.5 m", d.MaxPressureMPa)
	}
	if d.DurationS != 5 || len(d.Gauges) != 1 || d.Gauges[0] != "hoop1" {
		t.Errorf("duration %v gauges %v", d.DurationS, d.Gauges)
	}
	// Lossless: the stored readings decode to exactly the file's values.
	var depths, strains []float64
	err = l.ReadBlocks(ctx, d.ID, func(b *ledger.DecodedBlock) error {
		depths = append(depths, b.Values[1]...)
		strains = append(strains, b.Values[2]...)
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	wantDepth := []float64{0, 20, 50, 50.5, 30, 0.3}
	wantStrain := []float64{0, -120.5, -301.25, -303, -180, -1.5}
	for i := range wantDepth {
		if depths[i] != wantDepth[i] || strains[i] != wantStrain[i] {
			t.Fatalf("row %d: depth %v strain %v", i, depths[i], strains[i])
		}
	}
	got, err := l.Dive(ctx, d.ID.String()[:8])
	if err != nil || got.ID != d.ID || got.Site != "Test basin" {
		t.Fatalf("Dive by prefix: %v %+v", err, got)
	}
}

func TestIdempotent(t *testing.T) {
	l := newLedger(t, 0)
	ctx := context.Background()
	p := writeFile(t, "d.csv", goodDive)
	first, err := l.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: p})
	if err != nil {
		t.Fatal(err)
	}
	before := rowCounts(t, l)
	again, err := l.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: p})
	if err != nil {
		t.Fatal(err)
	}
	if !again.Duplicate || again.ID != first.ID {
		t.Fatalf("second log: duplicate=%v id %s (first %s)", again.Duplicate, again.ID, first.ID)
	}
	if after := rowCounts(t, l); fmt.Sprint(after) != fmt.Sprint(before) {
		t.Fatalf("rows changed: %v -> %v", before, after)
	}
	// The same samples with an acoustic-emission file it did not have is
	// not silently taken as the same dive.
	_, err = l.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: p, AE: writeFile(t, "h.csv", goodHits)})
	if err == nil || !strings.Contains(err.Error(), "already recorded") {
		t.Fatalf("want refusal, got %v", err)
	}
}

func TestConcurrentSameFile(t *testing.T) {
	l := newLedger(t, 64)
	ctx := context.Background()
	p := writeFile(t, "big.csv", synthCSV(20000))
	start := time.Date(2026, 5, 1, 8, 0, 0, 0, time.UTC)
	var wg sync.WaitGroup
	res := make([]*ledger.Dive, 4)
	errs := make([]error, 4)
	for i := range res {
		wg.Add(1)
		go func(i int) {
			defer wg.Done()
			res[i], errs[i] = l.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: p, Start: &start})
		}(i)
	}
	wg.Wait()
	dups := 0
	for i := range res {
		if errs[i] != nil {
			t.Fatal(errs[i])
		}
		if res[i].ID != res[0].ID {
			t.Fatalf("two dive ids: %s and %s", res[i].ID, res[0].ID)
		}
		if res[i].Duplicate {
			dups++
		}
	}
	if dups != len(res)-1 {
		t.Fatalf("%d duplicates of %d, want %d", dups, len(res), len(res)-1)
	}
	var n int64
	if err := l.Pool().QueryRow(ctx, "SELECT count(*) FROM dives").Scan(&n); err != nil || n != 1 {
		t.Fatalf("dives: %d (%v)", n, err)
	}
	var blocks int64
	if err := l.Pool().QueryRow(ctx, "SELECT count(*) FROM reading_blocks").Scan(&blocks); err != nil || blocks != (20000+63)/64 {
		t.Fatalf("blocks: %d (%v)", blocks, err)
	}
}

// synthCSV is a valid dive of n samples at 10 Hz with t_s times.
func synthCSV(n int) string {
	var b strings.Builder
	b.WriteString("t_s,pressure_mpa,strain_hoop1_ue\n")
	for i := 0; i < n; i++ {
		x := float64(i) / float64(n)
		p := 40 * 4 * x * (1 - x)
		fmt.Fprintf(&b, "%.1f,%.4f,%.2f\n", float64(i)/10, p, -p*95)
	}
	return b.String()
}

func TestBadInput(t *testing.T) {
	l := newLedger(t, 16) // small blocks: some are stored before a late error
	ctx := context.Background()
	lateBad := strings.Replace(synthCSV(500), "\n40.0,", "\n40.0x,", 1)
	start := time.Date(2026, 5, 1, 8, 0, 0, 0, time.UTC)
	tests := []struct {
		name    string
		samples string
		hits    string
		hull    string
		start   *time.Time
		raw     []byte
		want    string // substring of the error, with line:column where there is one
	}{
		{name: "missing time column", samples: "depth_m,temp_c\n1,2\n", want: "missing time column"},
		{name: "missing load column", samples: "time,temp_c\n2026-05-01T08:00:00Z,2\n", want: "missing load column"},
		{name: "unknown column", samples: "time,depth_m,salinity\n2026-05-01T08:00:00Z,1,35\n", want: `:1:3: column "salinity": unknown column`},
		{name: "non-numeric cell", samples: "time,depth_m\n2026-05-01T08:00:00Z,1\n2026-05-01T08:00:01Z,deep\n", want: `:3:2: column "depth_m": not a number`},
		{name: "NaN", samples: "time,depth_m\n2026-05-01T08:00:00Z,NaN\n", want: ":2:2: column \"depth_m\": \"NaN\": NaN and Inf"},
		{name: "Inf", samples: "time,depth_m\n2026-05-01T08:00:00Z,1\n2026-05-01T08:00:01Z,-Inf\n", want: ":3:2: column \"depth_m\": \"-Inf\": NaN and Inf"},
		{name: "time backwards", samples: "time,depth_m\n2026-05-01T08:00:05Z,1\n2026-05-01T08:00:04Z,2\n", want: ":3:1: column \"time\": time goes backwards"},
		{name: "duplicate time", samples: "time,depth_m\n2026-05-01T08:00:05Z,1\n2026-05-01T08:00:05Z,2\n", want: ":3:1: column \"time\": duplicate time stamp"},
		{name: "empty file", samples: "", want: "empty file"},
		{name: "comments only", samples: "# nothing\n\n", want: "empty file"},
		{name: "header only", samples: "time,depth_m\n", want: "header only"},
		{name: "ragged row", samples: "time,depth_m,temp_c\n2026-05-01T08:00:00Z,1,2\n2026-05-01T08:00:01Z,1\n", want: ":3: 2 fields, the header has 3"},
		{name: "unknown pressure unit", samples: "time,pressure_atm\n2026-05-01T08:00:00Z,1\n", want: `unknown pressure unit "atm"`},
		{name: "unknown depth unit", samples: "time,depth_ft\n2026-05-01T08:00:00Z,1\n", want: `unknown depth unit "ft"`},
		{name: "unknown strain unit", samples: "time,depth_m,strain_hoop1_mm\n2026-05-01T08:00:00Z,1,2\n", want: `unknown strain unit "mm"`},
		{name: "unknown hull", samples: goodDive, hull: "NO-SUCH-HULL", want: "unknown hull serial"},
		{name: "AE hit outside the dive", samples: goodDive, hits: "time,channel,amplitude_db,energy,counts,duration_us,rise_us\n2026-05-01T09:00:00Z,1,50,10,3,100,10\n", want: ":2:1: column \"time\": hit at 2026-05-01T09:00:00Z is outside the dive"},
		{name: "AE unknown channel", samples: goodDive, hits: "time,channel,amplitude_db,energy,counts,duration_us,rise_us\n2026-05-01T08:00:01Z,7,50,10,3,100,10\n", want: "channel 7 is not an acoustic-emission channel"},
		{name: "AE rise beyond duration", samples: goodDive, hits: "time,channel,amplitude_db,energy,counts,duration_us,rise_us\n2026-05-01T08:00:01Z,1,50,10,3,100,200\n", want: ":2:7: column \"rise_us\""},
		{name: "not text", raw: []byte("\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR\x00\x00"), want: "not a text file"},
		{name: "relative time without start", samples: "t_s,depth_m\n0,1\n", want: "give the dive's start time"},
		{name: "impossible depth", samples: "time,depth_m\n2026-05-01T08:00:00Z,-50\n", want: ":2:2: column \"depth_m\": impossible depth"},
		{name: "impossible strain", samples: "time,depth_m,strain_hoop1_ue\n2026-05-01T08:00:00Z,1,-90000\n", want: "impossible strain"},
		{name: "gauge not in spec", samples: "time,depth_m,strain_nose_ue\n2026-05-01T08:00:00Z,1,2\n", want: `strain gauge "nose" is not in hull`},
		{name: "bad time format", samples: "time,depth_m\n01/05/2026 08:00,1\n", want: ":2:1: column \"time\": not an RFC 3339 time"},
		{name: "repeated column", samples: "time,depth_m,depth_m\n2026-05-01T08:00:00Z,1,1\n", want: "column repeated"},
		{name: "two load columns", samples: "time,depth_m,pressure_bar\n2026-05-01T08:00:00Z,1,1\n", want: "a second load column"},
		{name: "error after blocks were stored", samples: lateBad, start: &start, want: ":402:1: column \"t_s\": not a number"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			before := rowCounts(t, l)
			p := filepath.Join(t.TempDir(), "s.csv")
			data := tc.raw
			if data == nil {
				data = []byte(tc.samples)
			}
			if err := os.WriteFile(p, data, 0o644); err != nil {
				t.Fatal(err)
			}
			req := ledger.LogRequest{Hull: serial, Samples: p, Start: tc.start}
			if tc.hull != "" {
				req.Hull = tc.hull
			}
			if tc.hits != "" {
				req.AE = writeFile(t, "h.csv", tc.hits)
			}
			_, err := l.LogDive(ctx, req)
			if err == nil {
				t.Fatalf("accepted; want error containing %q", tc.want)
			}
			if !strings.Contains(err.Error(), tc.want) {
				t.Fatalf("error %q\nwant it to contain %q", err, tc.want)
			}
			var ie *ledger.InputError
			if !errors.As(err, &ie) {
				t.Errorf("error is not an input error: %T", err)
			}
			if after := rowCounts(t, l); fmt.Sprint(after) != fmt.Sprint(before) {
				t.Fatalf("rows changed: %v -> %v", before, after)
			}
		})
	}
}

func TestBeyondRatedIsRecorded(t *testing.T) {
	l := newLedger(t, 0)
	// 4100 m on a hull rated 4000 m: recorded and marked, not refused.
	p := writeFile(t, "deep.csv", "time,depth_m\n2026-05-01T08:00:00Z,0\n2026-05-01T09:00:00Z,4100\n2026-05-01T10:00:00Z,0\n")
	d, err := l.LogDive(context.Background(), ledger.LogRequest{Hull: serial, Samples: p})
	if err != nil {
		t.Fatal(err)
	}
	if !d.BeyondRated || d.MaxDepthM != 4100 {
		t.Fatalf("dive %+v", d)
	}
	// Depth logged without latitude: pressure at latitude 90° (the most
	// pressure per metre).
	if want := seawater.DepthToMPa(4100, 90); !d.LatitudeAssumed || d.Latitude != 90 || math.Abs(d.MaxPressureMPa-want) > 1e-9 {
		t.Fatalf("depth dive: latitude %v (assumed %v), max pressure %v, want 90 and %v", d.Latitude, d.LatitudeAssumed, d.MaxPressureMPa, want)
	}
	// Pressure logged without latitude: depth at the equator (the deepest
	// reading of a pressure). The pressure is chosen so that the equator
	// puts it 5 m beyond the 4000 m rating while latitude 90° would put it
	// within: a wrong latitude is caught (UNESCO 1983 either way).
	pr := seawater.DepthToMPa(4005, 0)
	if seawater.MPaToDepth(pr, 90) >= 4000 {
		t.Fatalf("test set-up: %.4f MPa is beyond 4000 m at latitude 90 too", pr)
	}
	p = writeFile(t, "deep2.csv", fmt.Sprintf("time,pressure_mpa\n2026-05-02T08:00:00Z,0\n2026-05-02T09:00:00Z,%.6f\n", pr))
	d, err = l.LogDive(context.Background(), ledger.LogRequest{Hull: serial, Samples: p})
	if err != nil {
		t.Fatal(err)
	}
	if !d.BeyondRated || !d.LatitudeAssumed || d.Latitude != 0 || math.Abs(d.MaxDepthM-4005) > 0.01 {
		t.Fatalf("pressure dive: beyond %v, latitude %v (assumed %v), depth %v m; want beyond, 0, 4005 m", d.BeyondRated, d.Latitude, d.LatitudeAssumed, d.MaxDepthM)
	}
}

func TestAppendOnly(t *testing.T) {
	l := newLedger(t, 0)
	ctx := context.Background()
	if _, err := l.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: writeFile(t, "d.csv", goodDive), AE: writeFile(t, "h.csv", goodHits)}); err != nil {
		t.Fatal(err)
	}
	for _, sql := range []string{
		"UPDATE dives SET site = 'elsewhere'",
		"DELETE FROM reading_blocks",
		"UPDATE hull_revisions SET rated_depth_m = 6000",
		"DELETE FROM audit_chain",
		"TRUNCATE ae_hits",
		"UPDATE hulls SET serial = 'X'",
	} {
		if _, err := l.Pool().Exec(ctx, sql); err == nil || !strings.Contains(err.Error(), "append-only") {
			t.Errorf("%s: want refusal by the append-only trigger, got %v", sql, err)
		}
	}
}

func TestTamperDetected(t *testing.T) {
	ctx := context.Background()
	tamper := []struct {
		name, sql, kind string
	}{
		{"edit one reading", `UPDATE reading_blocks SET data = overlay(data placing '\x07'::bytea from length(data) - 2 for 1) WHERE block_no = 0`, "reading_block"},
		{"edit one reading and its checksum", `UPDATE reading_blocks SET data = overlay(data placing '\x07'::bytea from length(data) - 2 for 1), sha256 = sha256(overlay(data placing '\x07'::bytea from length(data) - 2 for 1)) WHERE block_no = 0`, "reading_block"},
		{"edit a dive", `UPDATE dives SET max_depth_m = 40`, "dive"},
		{"edit a hit", `UPDATE ae_hits SET amplitude_db = 40 WHERE seq = 1`, "ae_hits"},
		{"edit the spec", `UPDATE hull_revisions SET rated_depth_m = 6000`, "hull_revision"},
		{"edit a component", `UPDATE hull_components SET curve = 'other' WHERE name = 'laminate'`, "hull_revision"},
		{"remove a block", `DELETE FROM reading_blocks WHERE block_no = 0`, "reading_block"},
		{"add a hit behind the chain", `INSERT INTO ae_hits SELECT dive_id, hull_id, 99, t_ns, channel, amplitude_db, energy, counts, duration_us, rise_us FROM ae_hits WHERE seq = 0`, "ae_hits"},
	}
	for _, tc := range tamper {
		t.Run(tc.name, func(t *testing.T) {
			l := newLedger(t, 0)
			if _, err := l.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: writeFile(t, "d.csv", goodDive), AE: writeFile(t, "h.csv", goodHits)}); err != nil {
				t.Fatal(err)
			}
			res, err := l.Verify(ctx)
			if err != nil || !res.OK {
				t.Fatalf("clean ledger: %v %+v", err, res)
			}
			// The rogue administrator switches the guard off and edits.
			err = pgx.BeginFunc(ctx, l.Pool(), func(tx pgx.Tx) error {
				for _, tb := range ledgerTables {
					if _, err := tx.Exec(ctx, "ALTER TABLE "+tb+" DISABLE TRIGGER USER"); err != nil {
						return err
					}
				}
				tag, err := tx.Exec(ctx, tc.sql)
				if err == nil && tag.RowsAffected() == 0 {
					err = fmt.Errorf("tamper statement changed nothing")
				}
				return err
			})
			if err != nil {
				t.Fatal(err)
			}
			res, err = l.Verify(ctx)
			if err != nil {
				t.Fatal(err)
			}
			if res.OK || res.FirstBroken == nil {
				t.Fatalf("verify did not notice: %+v", res)
			}
			if res.FirstBroken.Kind != tc.kind {
				t.Errorf("first broken %+v, want kind %s", res.FirstBroken, tc.kind)
			}
		})
	}
}

func TestMigrationRace(t *testing.T) {
	ctx := context.Background()
	url := srv.NewDatabase(t, false) // empty: nothing migrated yet
	var wg sync.WaitGroup
	errs := make([]error, 4)
	for i := range errs {
		wg.Add(1)
		go func(i int) {
			defer wg.Done()
			l, err := ledger.Open(ctx, ledgertest.Config(t, url))
			if err == nil {
				l.Close()
			}
			errs[i] = err
		}(i)
	}
	wg.Wait()
	for _, err := range errs {
		if err != nil {
			t.Fatalf("concurrent first use: %v", err)
		}
	}
	l, err := ledger.Open(ctx, ledgertest.Config(t, url))
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	cur, latest, err := l.SchemaVersion(ctx)
	if err != nil || cur != latest || cur < 1 {
		t.Fatalf("schema version %d of %d (%v)", cur, latest, err)
	}
	var triggers int
	if err := l.Pool().QueryRow(ctx, "SELECT count(*) FROM pg_trigger WHERE tgname LIKE '%_append_only'").Scan(&triggers); err != nil || triggers != len(ledgerTables) {
		t.Fatalf("append-only triggers: %d (%v), want %d", triggers, err, len(ledgerTables))
	}
}

func TestHullRevision(t *testing.T) {
	l := newLedger(t, 0)
	ctx := context.Background()
	h, err := l.Hull(ctx, serial)
	if err != nil {
		t.Fatal(err)
	}
	sp := *h.Spec
	if _, err := l.AddHull(ctx, &sp, ledger.AddHullOptions{}); !errors.Is(err, ledger.ErrHullExists) {
		t.Fatalf("adding again: %v", err)
	}
	sp.RatedDepthM = 3500
	if _, err := l.AddHull(ctx, &sp, ledger.AddHullOptions{Revise: true}); err == nil {
		t.Fatal("revision without reason accepted")
	}
	r, err := l.AddHull(ctx, &sp, ledger.AddHullOptions{Revise: true, Reason: "derated after inspection"})
	if err != nil {
		t.Fatal(err)
	}
	if r.Revision != 2 || r.Spec.RatedDepthM != 3500 {
		t.Fatalf("revision %+v", r)
	}
	res, err := l.Verify(ctx)
	// Hull, revision 1 and its first status, revision 2 (the status did
	// not change).
	if err != nil || !res.OK || res.Records != 4 {
		t.Fatalf("verify: %v %+v", err, res)
	}
}
