package reports_test

import (
	"bytes"
	"context"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"hulltally/ledger"
	"hulltally/ledger/demo"
	"hulltally/reports"
	"hulltally/reports/sign"
)

func signer(t *testing.T, org string) *sign.Signer {
	t.Helper()
	dir := filepath.Join(t.TempDir(), "keys")
	if err := sign.Init(dir, org, 10); err != nil {
		t.Fatal(err)
	}
	s, err := sign.Load(dir)
	if err != nil {
		t.Fatal(err)
	}
	return s
}

// TestSignedReport: a report signed with the operator's key verifies
// offline (no ledger) and online; a forgery (the same report content
// signed by another key, naming the same organisation), a byte changed
// after signing and an unsigned report are refused with their reasons;
// a dive logged since makes the signed report authentic but outdated.
func TestSignedReport(t *testing.T) {
	l := srv.Open(t)
	ctx := context.Background()
	dd := t.TempDir()
	if _, err := demo.Run(ctx, l, demo.Options{Dir: dd, DivesPerHull: 3, SampleHz: 0.1}); err != nil {
		t.Fatal(err)
	}
	op := signer(t, "Deep Ocean Works")
	forger := signer(t, "Deep Ocean Works")
	dir := t.TempDir()
	path := filepath.Join(dir, "r.pdf")
	w, err := reports.WriteWith(ctx, l, reports.KindHull, "CSC-QUI-03", path, time.Now(), reports.WriteOptions{Signer: op})
	if err != nil {
		t.Fatal(err)
	}
	if !w.Signed || w.SignedBy != "Deep Ocean Works" || w.SignerFingerprint != op.Fingerprint() || w.Pages < 2 {
		t.Fatalf("written %+v", w)
	}
	v, err := reports.VerifyOffline(ctx, path, op.Public())
	if err != nil || !v.OK || v.Signature != reports.SigValid || !v.Offline || v.Fingerprint != w.Fingerprint {
		t.Fatalf("offline: %v %+v", err, v)
	}
	v, err = reports.VerifyWith(ctx, l, path, reports.VerifyOptions{Key: op.Public()})
	if err != nil || !v.OK || v.Signature != reports.SigValid || !strings.Contains(v.Reason, "matches the ledger") {
		t.Fatalf("online: %v %+v", err, v)
	}
	// Without a key, the ledger check alone (as before) passes too.
	if v, err := reports.Verify(ctx, l, path); err != nil || !v.OK || v.Signature != reports.SigNotChecked {
		t.Fatalf("no key: %v %+v", err, v)
	}

	signed, _ := os.ReadFile(path)
	unsignedPath := filepath.Join(dir, "unsigned.pdf")
	if _, err := reports.Write(ctx, l, reports.KindHull, "CSC-QUI-03", unsignedPath, time.Now()); err != nil {
		t.Fatal(err)
	}
	unsigned, _ := os.ReadFile(unsignedPath)
	forged, err := sign.SignPDF(unsigned, forger, sign.Meta{Fingerprint: w.Fingerprint})
	if err != nil {
		t.Fatal(err)
	}
	oneByte := bytes.Clone(signed)
	i := bytes.Index(oneByte, []byte("stream\n")) + 100
	oneByte[i] ^= 0x20
	cases := []struct {
		name   string
		b      []byte
		sig    string
		reason string
	}{
		{"forged: signed by another key", forged, reports.SigOtherKey, "signed by another key"},
		{"one byte changed after signing", oneByte, reports.SigAltered, "does not verify"},
		{"unsigned", unsigned, reports.SigUnsigned, "no signature"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			p := filepath.Join(t.TempDir(), "x.pdf")
			os.WriteFile(p, tc.b, 0o644)
			for _, online := range []bool{false, true} {
				v, err := reports.VerifyWith(ctx, l, p, reports.VerifyOptions{Key: op.Public(), Offline: !online})
				if err != nil || v.OK || v.Signature != tc.sig || !strings.Contains(v.Reason, tc.reason) {
					t.Fatalf("online=%v: %v %+v", online, err, v)
				}
			}
		})
	}
	if _, err := reports.VerifyWith(ctx, nil, path, reports.VerifyOptions{Offline: true}); err == nil {
		t.Fatal("offline without a key was accepted")
	}

	// A dive logged since: authentic but outdated online; offline it is
	// still the operator's unaltered report.
	lat := -37.6
	again, _ := os.ReadFile(filepath.Join(dd, "CSC-QUI-03", "dive-001.csv"))
	newFile := filepath.Join(t.TempDir(), "later.csv")
	os.WriteFile(newFile, []byte(strings.Replace(string(again), "2026-03", "2026-09", -1)), 0o644)
	if _, err := l.LogDive(ctx, ledger.LogRequest{Hull: "CSC-QUI-03", Samples: newFile, Latitude: &lat}); err != nil {
		t.Fatal(err)
	}
	v, err = reports.VerifyWith(ctx, l, path, reports.VerifyOptions{Key: op.Public()})
	if err != nil || v.OK || !v.Outdated || v.Signature != reports.SigValid || !strings.Contains(v.Reason, "authentic but outdated") || !strings.Contains(v.Reason, "records were added") {
		t.Fatalf("outdated: %v %+v", err, v)
	}
	if v, err := reports.VerifyOffline(ctx, path, op.Public()); err != nil || !v.OK {
		t.Fatalf("offline after a dive: %v %+v", err, v)
	}

	// An independent verifier: poppler's pdfsig.
	if _, err := exec.LookPath("pdfsig"); err != nil {
		t.Log("SKIPPED the pdfsig cross-check: pdfsig (poppler-utils) is not installed")
		return
	}
	out, _ := exec.Command("pdfsig", path).CombinedOutput()
	for _, want := range []string{"Signature is Valid", "Total document signed"} {
		if !strings.Contains(string(out), want) {
			t.Errorf("pdfsig lacks %q:\n%s", want, out)
		}
	}
	// The report still reads as text (the signature did not break it).
	if txt := pdftotext(t, path); !strings.Contains(txt, "CSC-QUI-03") {
		t.Error("the signed report's text lacks the serial")
	}
}
