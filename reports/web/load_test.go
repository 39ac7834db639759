package web

import (
	"context"
	"fmt"
	"io"
	"os"
	"slices"
	"strings"
	"sync"
	"testing"
	"time"

	"hulltally/ledger"
	"hulltally/ledger/spec"
)

// TestLoad: 8 uploaders and 50 readers at once on loopback against a real
// PostgreSQL, bounded in count (8 × 5 dives over 4 hulls, each uploader
// sending its first dive twice at once) and in time (the readers stop when
// the uploads are done). Afterwards: every dive stored exactly once (no
// lost dive, no doubled one), every answer 200 or 201, verify clean. The
// latencies are reported, not asserted (a benchmark's job).
func TestLoad(t *testing.T) {
	if testing.Short() {
		t.Skip("a load test")
	}
	f := newFixture(t, Options{MaxUploadBytes: 1 << 20, PoolPerPerson: 8})
	ctx := context.Background()
	hulls := []string{serial}
	for i := 2; i <= 4; i++ {
		data := strings.Replace(string(mustRead(t, "../../testdata/hulls/example-cylinder.yaml")), "serial: EX-C4000-01", fmt.Sprintf("serial: LOAD-%02d", i), 1)
		h, err := spec.Parse([]byte(data))
		if err != nil {
			t.Fatal(err)
		}
		if _, err := f.owner.AddHull(ctx, h, ledger.AddHullOptions{}); err != nil {
			t.Fatal(err)
		}
		hulls = append(hulls, h.Serial)
	}
	const uploaders, perUploader, readers = 8, 5, 50
	type timing struct {
		kind string
		d    time.Duration
		code int
	}
	var mu sync.Mutex
	var timings []timing
	note := func(kind string, d time.Duration, code int) {
		mu.Lock()
		timings = append(timings, timing{kind, d, code})
		mu.Unlock()
	}
	send := func(method, path string, body io.Reader, ctype string, role ledger.Role) (int, map[string]any) {
		start := time.Now()
		code, doc := f.do(role, method, path, body, ctype)
		kind := "read"
		if method == "POST" {
			kind = "upload"
		}
		note(kind, time.Since(start), code)
		return code, doc
	}
	var ids sync.Map
	var wg sync.WaitGroup
	done := make(chan struct{})
	for u := range uploaders {
		wg.Add(1)
		go func() {
			defer wg.Done()
			hull := hulls[u%len(hulls)]
			for k := range perUploader {
				// Each uploader has its own day and hour, so that no two
				// dives of a hull overlap.
				day := fmt.Sprintf("2026-04-%02dT%02d", 1+k, 2*u)
				csv := strings.ReplaceAll(diveCSV, "2026-05-01T08", day)
				copies := 1
				if k == 0 {
					copies = 2 // the same dive twice at once: stored once
				}
				var cw sync.WaitGroup
				for range copies {
					cw.Add(1)
					go func() {
						defer cw.Done()
						body, ct := upload(t, csv)
						code, doc := send("POST", "/api/v1/hulls/"+hull+"/dives", body, ct, ledger.RoleOperator)
						if code != 201 && code != 200 {
							t.Errorf("upload %s %s: %d %v", hull, day, code, doc)
							return
						}
						if code == 201 {
							if _, dup := ids.LoadOrStore(doc["dive_id"], day); dup {
								t.Errorf("dive %v stored twice", doc["dive_id"])
							}
						}
					}()
				}
				cw.Wait()
			}
		}()
	}
	var rg sync.WaitGroup
	paths := []string{"/api/v1/fleet", "/api/v1/hulls/" + serial, "/api/v1/hulls/LOAD-02/clearance?depth_m=1000&bottom_min=30", "/api/v1/me"}
	for r := range readers {
		rg.Add(1)
		go func() {
			defer rg.Done()
			for i := 0; ; i++ {
				select {
				case <-done:
					return
				default:
				}
				if code, doc := send("GET", paths[(r+i)%len(paths)], nil, "", ledger.RoleInspector); code != 200 {
					t.Errorf("read %s: %d %v", paths[(r+i)%len(paths)], code, doc)
					return
				}
			}
		}()
	}
	wg.Wait()
	close(done)
	rg.Wait()

	n := 0
	ids.Range(func(any, any) bool { n++; return true })
	if want := uploaders * perUploader; n != want || f.dives() != int64(want) {
		t.Fatalf("%d dives answered as new, %d stored; want %d each", n, f.dives(), want)
	}
	res, err := f.owner.Verify(ctx)
	if err != nil || !res.OK {
		t.Fatalf("verify after the load: %v %+v", err, res.FirstBroken)
	}
	for _, kind := range []string{"upload", "read"} {
		var ds []time.Duration
		for _, x := range timings {
			if x.kind == kind {
				ds = append(ds, x.d)
			}
		}
		slices.Sort(ds)
		if len(ds) == 0 {
			t.Fatalf("no %s timed", kind)
		}
		q := func(p float64) time.Duration { return ds[min(len(ds)-1, int(p*float64(len(ds))))] }
		t.Logf("%s: %d requests, median %v, p95 %v, max %v", kind, len(ds), q(0.5).Round(time.Millisecond), q(0.95).Round(time.Millisecond), ds[len(ds)-1].Round(time.Millisecond))
	}
}

func mustRead(t *testing.T, p string) []byte {
	t.Helper()
	b, err := os.ReadFile(p)
	if err != nil {
		t.Fatal(err)
	}
	return b
}
