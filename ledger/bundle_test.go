package ledger_test

import (
	"bytes"
	"compress/gzip"
	"context"
	"crypto/ecdsa"
	"crypto/elliptic"
	"crypto/rand"
	"crypto/sha256"
	"crypto/x509"
	"encoding/hex"
	"encoding/json"
	"errors"
	"strings"
	"testing"

	"github.com/jackc/pgx/v5"

	"hulltally/ledger"
)

func ecKey(t *testing.T) *ecdsa.PrivateKey {
	t.Helper()
	k, err := ecdsa.GenerateKey(elliptic.P256(), rand.Reader)
	if err != nil {
		t.Fatal(err)
	}
	return k
}

// bundleLedger is a hull with two dives in blocks of 2 samples, a
// checkpoint signed by key after the first dive, and the second dive
// after it (records beyond the checkpoint).
func bundleLedger(t *testing.T, key *ecdsa.PrivateKey) *ledger.Ledger {
	t.Helper()
	l := newLedger(t, 2)
	logDive(t, l, serial, "2026-05-01")
	if _, err := l.Checkpoint(context.Background(), key); err != nil {
		t.Fatal(err)
	}
	logDive(t, l, serial, "2026-05-02")
	return l
}

func export(t *testing.T, l *ledger.Ledger, key *ecdsa.PrivateKey) ([]byte, *ledger.BundleSummary) {
	t.Helper()
	var b bytes.Buffer
	sum, err := l.ExportBundle(context.Background(), serial, &b, key)
	if err != nil {
		t.Fatal(err)
	}
	return b.Bytes(), sum
}

func verifyB(t *testing.T, b []byte, pub *ecdsa.PublicKey) *ledger.BundleResult {
	t.Helper()
	r, err := ledger.VerifyBundle(bytes.NewReader(b), pub)
	if err != nil {
		t.Fatal(err)
	}
	return r
}

// bundleLines splits a bundle into its lines (without "\n").
func bundleLines(b []byte) []string {
	return strings.Split(strings.TrimSuffix(string(b), "\n"), "\n")
}

func joinLines(ls []string) []byte { return []byte(strings.Join(ls, "\n") + "\n") }

// resign replaces the signature line with the operator's signature of
// the rest, as documented in the format: what a forger holding the key
// (or the operator's own tool, run on altered content) would produce.
func resign(t *testing.T, ls []string, key *ecdsa.PrivateKey) []byte {
	t.Helper()
	content := joinLines(ls[:len(ls)-1])
	d := sha256.Sum256(content)
	sig, err := ecdsa.SignASN1(rand.Reader, key, d[:])
	if err != nil {
		t.Fatal(err)
	}
	pk, _ := x509.MarshalPKIXPublicKey(&key.PublicKey)
	tr, _ := json.Marshal(ledger.BundleSignature{Type: "signature", Algorithm: ledger.BundleAlgECDSA, ContentSHA256: hex.EncodeToString(d[:]), PublicKey: pk, Signature: sig})
	return append(content, append(tr, '\n')...)
}

// editLink rewrites the first link of kind with fn.
func editLink(t *testing.T, ls []string, kind string, fn func(*ledger.BundleLink)) []string {
	t.Helper()
	out := append([]string(nil), ls...)
	for i, s := range out {
		var k ledger.BundleLink
		if json.Unmarshal([]byte(s), &k) != nil || k.Type != "link" || k.Kind != kind {
			continue
		}
		fn(&k)
		b, err := json.Marshal(k)
		if err != nil {
			t.Fatal(err)
		}
		out[i] = string(b)
		return out
	}
	t.Fatalf("no %s link in the bundle", kind)
	return nil
}

func TestBundleExportVerify(t *testing.T) {
	ctx := context.Background()
	key := ecKey(t)
	l := bundleLedger(t, key)
	b, sum := export(t, l, key)
	head, n, err := l.ChainHead(ctx, hullID(t, l, serial))
	if err != nil {
		t.Fatal(err)
	}
	var blocks int64
	if err := l.Pool().QueryRow(ctx, "SELECT count(*) FROM reading_blocks").Scan(&blocks); err != nil {
		t.Fatal(err)
	}
	if sum.Records != n || sum.Head != hex.EncodeToString(head) || sum.Blocks != blocks || blocks < 4 || sum.Checkpoint != 1 {
		t.Fatalf("summary %+v; chain %d %x, %d blocks", sum, n, head, blocks)
	}
	r := verifyB(t, b, &key.PublicKey)
	if !r.OK || !r.SignatureOK || r.FirstBroken != nil || r.Records != n || r.Blocks != blocks || r.Head != sum.Head || r.Serial != serial {
		t.Fatalf("offline verify: %+v %+v", r, r.FirstBroken)
	}
	// The checkpoint covers the first dive's records, not the second's.
	if !r.CheckpointCovers || r.Checkpoint != 1 || r.CheckpointLength <= 0 || r.CheckpointLength >= n {
		t.Fatalf("checkpoint coverage: %+v (chain %d)", r, n)
	}
	if r.Kinds["dive"] != 2 || r.Kinds["hull"] != 1 || r.Kinds["reading_block"] != blocks {
		t.Fatalf("kinds %v", r.Kinds)
	}
	// Gzip is read as well, and signs the same uncompressed content.
	var z bytes.Buffer
	zw := gzip.NewWriter(&z)
	zw.Write(b)
	zw.Close()
	if r := verifyB(t, z.Bytes(), &key.PublicKey); !r.OK {
		t.Fatalf("gzip bundle: %+v", r)
	}
	// An export with no checkpoint by this key carries none.
	other := ecKey(t)
	b2, sum2 := export(t, l, other)
	if r := verifyB(t, b2, &other.PublicKey); !r.OK || sum2.Checkpoint != 0 || r.Checkpoint != 0 || r.CheckpointCovers {
		t.Fatalf("bundle without checkpoint: %+v %+v", sum2, r)
	}
}

func TestBundleRefused(t *testing.T) {
	key := ecKey(t)
	l := bundleLedger(t, key)
	b, _ := export(t, l, key)
	ls := bundleLines(b)
	last := len(ls) - 1
	cut := func(ls []string, n int) []string { // drop n links before the signature
		return append(append([]string(nil), ls[:len(ls)-1-n]...), ls[len(ls)-1])
	}
	var hdr ledger.BundleHeader
	if err := json.Unmarshal([]byte(ls[0]), &hdr); err != nil {
		t.Fatal(err)
	}
	other := ecKey(t)
	for _, c := range []struct {
		name   string
		bundle []byte
		pub    *ecdsa.PublicKey
		sigOK  bool
		reason string
	}{
		{"a byte of a block's data", joinLines(editLink(t, ls, "reading_block", func(k *ledger.BundleLink) { k.Data[len(k.Data)/2] ^= 1 })), &key.PublicKey, false,
			"reading block data does not match the SHA-256 in its canonical bytes"},
		{"a byte of a dive's canonical bytes", joinLines(editLink(t, ls, "dive", func(k *ledger.BundleLink) { k.Canon[len(k.Canon)-1] ^= 1 })), &key.PublicKey, false,
			"record content does not match its hash"},
		{"a byte of the signature", joinLines(append(append([]string(nil), ls[:last]...), flipSig(t, ls[last]))), &key.PublicKey, false,
			"does not verify under the given key"},
		{"another key", b, &other.PublicKey, false, "does not verify under the given key"},
		{"the last record cut", joinLines(cut(ls, 1)), &key.PublicKey, false, "records were removed or added"},
		{"no signature line", joinLines(ls[:last]), &key.PublicKey, false, "no signature line"},
		// Cut to below the checkpoint, the header made to agree, and
		// signed again with the operator's key: only the checkpoint
		// shows it.
		{"cut below the checkpoint and re-signed", func() []byte {
			ls2 := cut(ls, len(ls)-4) // header, checkpoint, hull record, signature
			h := hdr
			var k ledger.BundleLink
			json.Unmarshal([]byte(ls2[2]), &k)
			h.ChainLength, h.Head = 1, k.Hash
			hb, _ := json.Marshal(h)
			ls2[0] = string(hb)
			return resign(t, ls2, key)
		}(), &key.PublicKey, true, "checkpoint 1 says the hull's chain had"},
		// A block's data and its record's hash both changed, re-signed:
		// the chain link after it no longer follows.
		{"a block rewritten with its hash, re-signed", func() []byte {
			ls2 := editLink(t, ls, "reading_block", func(k *ledger.BundleLink) {
				k.Data[0] ^= 1
				s := sha256.Sum256(k.Data)
				copy(k.Canon[len(k.Canon)-32:], s[:])
				p, _ := hex.DecodeString(k.Prev)
				h := sha256.Sum256(append(p, k.Canon...))
				k.Hash = hex.EncodeToString(h[:])
			})
			return resign(t, ls2, key)
		}(), &key.PublicKey, true, "previous-hash link does not match"},
	} {
		t.Run(c.name, func(t *testing.T) {
			r := verifyB(t, c.bundle, c.pub)
			if r.OK || r.SignatureOK != c.sigOK || !strings.Contains(r.Problem, c.reason) {
				t.Fatalf("want refused (signature ok %v) for %q; got ok %v signature %v: %s (signature: %s)", c.sigOK, c.reason, r.OK, r.SignatureOK, r.Problem, r.SignatureReason)
			}
		})
	}
}

func flipSig(t *testing.T, line string) string {
	t.Helper()
	var s ledger.BundleSignature
	if err := json.Unmarshal([]byte(line), &s); err != nil {
		t.Fatal(err)
	}
	s.Signature[len(s.Signature)-1] ^= 1
	b, _ := json.Marshal(s)
	return string(b)
}

// TestBundleExportRefusesBrokenChain: an edited record, and a rewrite
// with every later hash recomputed (which the checkpoint shows), are not
// exported: a signed bundle would vouch for them.
func TestBundleExportRefusesBrokenChain(t *testing.T) {
	ctx := context.Background()
	key := ecKey(t)
	t.Run("edited", func(t *testing.T) {
		l := bundleLedger(t, key)
		rogue(t, l, func(tx pgx.Tx) error {
			_, err := tx.Exec(ctx, "UPDATE dives SET max_depth_m = 1")
			return err
		})
		if _, err := l.ExportBundle(ctx, serial, &bytes.Buffer{}, key); !errors.Is(err, ledger.ErrChainBroken) {
			t.Fatalf("export of an edited chain: %v", err)
		}
	})
	t.Run("rewritten before the checkpoint", func(t *testing.T) {
		l := newLedger(t, 0)
		logDive(t, l, serial, "2026-05-01")
		if _, err := l.Checkpoint(ctx, key); err != nil {
			t.Fatal(err)
		}
		rewriteDive(t, l, hullID(t, l, serial))
		_, err := l.ExportBundle(ctx, serial, &bytes.Buffer{}, key)
		if !errors.Is(err, ledger.ErrChainBroken) || !strings.Contains(err.Error(), "rewritten") {
			t.Fatalf("export of a rewritten chain: %v", err)
		}
	})
	t.Run("unknown hull", func(t *testing.T) {
		l := newLedger(t, 0)
		if _, err := l.ExportBundle(ctx, "NO-SUCH", &bytes.Buffer{}, key); !errors.Is(err, ledger.ErrUnknownHull) {
			t.Fatalf("unknown hull: %v", err)
		}
	})
}

// TestBundleNotABundle: input that is not a bundle is an error, not a
// pass.
func TestBundleNotABundle(t *testing.T) {
	key := ecKey(t)
	for _, in := range []string{"", "hello\n", `{"type":"link"}` + "\n"} {
		r, err := ledger.VerifyBundle(strings.NewReader(in), &key.PublicKey)
		if err == nil && (r == nil || r.OK) {
			t.Fatalf("%q: %+v", in, r)
		}
	}
}

// FuzzVerifyBundle: any input is a result or an error, never a panic,
// and never OK under a key that signed nothing.
func FuzzVerifyBundle(f *testing.F) {
	f.Add([]byte(`{"type":"header","format":"hulltally-bundle","version":1}` + "\n" + `{"type":"link","seq":1,"kind":"hull","canon":"cwRodWxs"}` + "\n"))
	f.Add([]byte(`{"type":"signature"}` + "\n" + `{"type":"checkpoint"}` + "\n"))
	f.Add([]byte(`{"type":"header"}` + "\n" + `{"type":"checkpoint","checkpoint":{"statement":"x"}}` + "\n"))
	key, err := ecdsa.GenerateKey(elliptic.P256(), rand.Reader)
	if err != nil {
		f.Fatal(err)
	}
	f.Fuzz(func(t *testing.T, b []byte) {
		r, err := ledger.VerifyBundle(bytes.NewReader(b), &key.PublicKey)
		if err == nil && r.OK {
			t.Fatalf("a bundle nobody signed verified: %q", b)
		}
	})
}
