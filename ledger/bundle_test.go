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
	"encoding/binary"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"math"
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

// rechain recomputes every link's prev and hash and the header's head,
// as a forger holding the key would after editing a record.
func rechain(t *testing.T, ls []string) []string {
	t.Helper()
	out := append([]string(nil), ls...)
	prev := make([]byte, sha256.Size)
	for i, s := range out {
		var k ledger.BundleLink
		if json.Unmarshal([]byte(s), &k) != nil || k.Type != "link" {
			continue
		}
		h := sha256.Sum256(append(append([]byte(nil), prev...), k.Canon...))
		k.Prev, k.Hash = hex.EncodeToString(prev), hex.EncodeToString(h[:])
		prev = h[:]
		b, _ := json.Marshal(k)
		out[i] = string(b)
	}
	var hdr ledger.BundleHeader
	if err := json.Unmarshal([]byte(out[0]), &hdr); err != nil {
		t.Fatal(err)
	}
	hdr.Head = hex.EncodeToString(prev)
	b, _ := json.Marshal(hdr)
	out[0] = string(b)
	return out
}

// TestBundleDamageRecomputed: the damage re-computed from a bundle's own
// cycles and time at pressure agrees with the ledger's, and every hit is
// re-checked against its record.
func TestBundleDamageRecomputed(t *testing.T) {
	ctx := context.Background()
	key := ecKey(t)
	l := bundleLedger(t, key)
	b, sum := export(t, l, key)
	var hits int64
	if err := l.Pool().QueryRow(ctx, "SELECT count(*) FROM ae_hits").Scan(&hits); err != nil {
		t.Fatal(err)
	}
	r := verifyB(t, b, &key.PublicKey)
	if !r.OK || hits == 0 || r.HitRows != hits || sum.HitRows != hits || r.HitsUnchecked != 0 {
		t.Fatalf("hits: %d in the ledger, %d exported, %d re-checked (%d unchecked): %s", hits, sum.HitRows, r.HitRows, r.HitsUnchecked, r.Problem)
	}
	d := r.Damage
	if d == nil || !d.AllAgree || d.Assessed != 2 || d.Recomputed != 2 || d.Disagreements != 0 || len(d.NotRecomputed) != 0 || len(d.Components) == 0 {
		t.Fatalf("damage: %+v", d)
	}
	// The ledger's figures: each dive's own assessment (no reassessment
	// was run), summed per component.
	rows, err := l.Pool().Query(ctx, `SELECT component, sum(c), sum(s) FROM assessment_damage a, unnest(a.cyclic, a.sustained) AS u(c, s) GROUP BY component ORDER BY component`)
	if err != nil {
		t.Fatal(err)
	}
	defer rows.Close()
	i := 0
	for rows.Next() {
		var name string
		var cy, su float64
		if err := rows.Scan(&name, &cy, &su); err != nil {
			t.Fatal(err)
		}
		if i >= len(d.Components) {
			t.Fatalf("component %s is not in the bundle's damage", name)
		}
		c := d.Components[i]
		i++
		rel := func(a, b float64) bool { return a == b || math.Abs(a-b) <= 1e-9*math.Max(math.Abs(a), math.Abs(b)) }
		if c.Component != name || !c.Agree || !rel(c.RecordedCyclic, cy) || !rel(c.RecomputedCyclic, cy) || !rel(c.RecordedSustained, su) ||
			!rel(c.RecomputedSustained, su) || c.RecomputedCyclic <= 0 || !rel(c.RecordedTotal, cy+su) {
			t.Fatalf("component %s: ledger cyclic %g sustained %g; bundle %+v", name, cy, su, c)
		}
	}
	if i != len(d.Components) {
		t.Fatalf("%d components in the ledger, %d in the bundle", i, len(d.Components))
	}
	if got, err := ledger.BundleDamage(bytes.NewReader(b), &key.PublicKey); err != nil || !got.AllAgree {
		t.Fatalf("BundleDamage: %+v %v", got, err)
	}
}

// TestBundleDamageForged: the operator halves one dive's recorded damage,
// recomputes the chain and signs again (the bundle's own signature holds,
// no checkpoint by this key). The re-computation from the dive's cycles
// finds it.
func TestBundleDamageForged(t *testing.T) {
	key := ecKey(t)
	l := bundleLedger(t, ecKey(t)) // the checkpoint is by another key
	b, _ := export(t, l, key)
	ls := bundleLines(b)
	// The last assessment: the newest of its dive.
	last := -1
	for i, s := range ls {
		var k ledger.BundleLink
		if json.Unmarshal([]byte(s), &k) == nil && k.Type == "link" && k.Kind == "assessment" {
			last = i
		}
	}
	if last < 0 {
		t.Fatal("no assessment in the bundle")
	}
	var k ledger.BundleLink
	json.Unmarshal([]byte(ls[last]), &k)
	forged, old, now, err := ledger.ForgeAssessmentCyclic(k.Canon, 0.5)
	if err != nil || old <= 0 {
		t.Fatalf("forging: %v (figure %g)", err, old)
	}
	k.Canon = forged
	kb, _ := json.Marshal(k)
	ls[last] = string(kb)
	r := verifyB(t, resign(t, rechain(t, ls), key), &key.PublicKey)
	if r.OK || !r.SignatureOK || r.Damage == nil || r.Damage.AllAgree || r.Damage.Disagreements != 1 {
		t.Fatalf("forged damage not found: ok %v signature %v damage %+v: %s", r.OK, r.SignatureOK, r.Damage, r.Problem)
	}
	x := r.Damage.FirstDisagreement
	if x.Figure != "cyclic damage" || x.Recorded != now || x.Recomputed != old || x.Assessment != k.Key {
		t.Fatalf("disagreement %+v; forged %g from %g", x, now, old)
	}
	if want := fmt.Sprintf("recorded %.6g, re-computed %.6g", now, old); !strings.Contains(r.Problem, want) {
		t.Fatalf("problem %q does not say %q", r.Problem, want)
	}
	var comp ledger.BundleComponentDamage
	for _, c := range r.Damage.Components {
		if c.Component == x.Component {
			comp = c
		}
	}
	if comp.Agree || !(comp.RecordedCyclic < comp.RecomputedCyclic) {
		t.Fatalf("component %+v", comp)
	}
	if _, err := ledger.BundleDamage(bytes.NewReader(resign(t, rechain(t, ls), key)), &key.PublicKey); err == nil {
		t.Fatal("BundleDamage of a forged bundle: no error")
	}
}

// TestBundleHitChanged: a hit made quieter in the bundle is refused,
// signed again or not; so is a hit removed.
func TestBundleHitChanged(t *testing.T) {
	key := ecKey(t)
	l := bundleLedger(t, key)
	b, _ := export(t, l, key)
	ls := bundleLines(b)
	quieter := editLink(t, ls, "ae_hits", func(k *ledger.BundleLink) {
		// The first hit's amplitude: fields seq, t_ns, channel (9 bytes
		// each), then 'f' and its 8 bytes.
		a := math.Float64frombits(binary.BigEndian.Uint64(k.Data[28:36]))
		binary.BigEndian.PutUint64(k.Data[28:36], math.Float64bits(a-10))
	})
	fewer := editLink(t, ls, "ae_hits", func(k *ledger.BundleLink) { k.Data = k.Data[:len(k.Data)/2] })
	for name, bundle := range map[string][]byte{
		"quieter":           joinLines(quieter),
		"quieter re-signed": resign(t, quieter, key),
		"removed re-signed": resign(t, fewer, key),
	} {
		r := verifyB(t, bundle, &key.PublicKey)
		if r.OK || !strings.Contains(r.Problem, "hit rows do not match the SHA-256") {
			t.Fatalf("%s: want refused for the hit rows; got ok %v: %s", name, r.OK, r.Problem)
		}
	}
}
