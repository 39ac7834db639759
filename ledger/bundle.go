package ledger

// A bundle is one hull's record as one signed, self-describing file, to be
// checked without the operator's database (Ledger.ExportBundle writes it,
// VerifyBundle checks it; `hulltally export` and `hulltally verify
// --bundle`).
//
// Format "hulltally-bundle", version 2 (version 1, without the hit rows
// on ae_hits links, is still read). The file is JSON lines: UTF-8, one
// JSON object a line, each line ending in "\n"; the whole file may be
// gzip-compressed (recognised by its magic bytes; everything below is of
// the uncompressed bytes). Every object has a "type"; unknown fields are
// refused. Byte strings are standard base64, hashes lower-case hex. The
// lines, in order:
//
//  1. header (exactly one, first):
//     {"type":"header","format":"hulltally-bundle","version":1,
//     "created_at":RFC 3339,"hull":UUID,"serial":S,"hull_recorded_at":RFC 3339,
//     "chain_length":N,"head":HEX,"revision":R,"spec_json":S}
//     chain_length and head are the hull's chain as exported (head is 64
//     zeros for an empty chain); spec_json is the hull's specification in
//     force (revision R), byte for byte the spec JSON inside that
//     revision's hull_revision record.
//  2. checkpoint (at most one): the newest signed checkpoint of the
//     ledger's checkpoints table that was signed by the bundle's key, as
//     the checkpoint log writes it (seq, time, prev, root, hulls,
//     statement, signature, public_key, hash) under "checkpoint":
//     {"type":"checkpoint","checkpoint":{...}}
//  3. link (chain_length of them, seq 1, 2, … in order), one per record
//     of the hull's audit chain:
//     {"type":"link","seq":N,"kind":K,"key":KEY,"prev":HEX,"hash":HEX,
//     "canon":BASE64[,"data":BASE64]}
//     canon is the record's canonical bytes exactly as `verify` rebuilds
//     them from the stored rows (DEVELOPERS.md, "The audit chain"), so
//     that hash = SHA-256(prev ‖ canon). A reading_block link also
//     carries data, the block's encoded readings, whose SHA-256 is the
//     last field of its canonical bytes. An ae_hits link (version 2)
//     carries data too: the canonical bytes of every hit of the dive in
//     seq order (seq from 0), concatenated, exactly the bytes whose
//     SHA-256 and count its canonical bytes hold.
//  4. signature (exactly one, last; nothing may follow it):
//     {"type":"signature","algorithm":"ecdsa-p256-sha256"|"ed25519-sha256",
//     "content_sha256":HEX,"public_key":BASE64,"signature":BASE64}
//     content_sha256 is the SHA-256 of every byte before this line (the
//     header through the last "\n" before it); signature is the
//     operator's signature of those 32 bytes: ECDSA P-256, ASN.1 DER, with
//     the digest as the signed hash (ecdsa-p256-sha256), or Ed25519 over
//     the 32 bytes (ed25519-sha256). public_key names the key (PKIX DER
//     for ECDSA, the 32 raw bytes for Ed25519); the verifier trusts only
//     the key it is given, never this field.
//
// VerifyBundle checks, with no database: the signature under the given
// key; the header's format and version; the chain (seq from 1 without
// gaps, each prev the hash before it, hash = SHA-256(prev ‖ canon), the
// kind inside the canonical bytes the link's kind); the first record is
// the header's hull (id and serial); every reading block's data against
// the SHA-256 inside its canonical bytes (and the block's dive, number
// and hull against its key and the header); the link count and head
// against the header; the spec against its hull_revision record; and the
// checkpoint, when there is one: its signature under the same key, its
// statement, Merkle root and hash, and that the bundle's chain holds the
// checkpointed head at the checkpointed length for this hull. What a
// bundle cannot show: records appended after its checkpoint are vouched
// for only by the bundle's own signature (the operator's word at export
// time), as in the ledger.
//
// Version 2 adds: every ae_hits link's hit rows are decoded and checked
// against the count and SHA-256 in its canonical bytes; and the damage of
// every assessed dive is computed again from the bundle alone (its
// dive_cycles "pressure" series and dive_holds, the spec of the
// assessment's hull revision, the assessment's configuration and the
// shipped curve library) and compared with the figures of the dive's
// newest assessment (bundle_damage.go). A figure that disagrees refuses
// the bundle.

import (
	"bufio"
	"bytes"
	"compress/gzip"
	"context"
	"crypto"
	"crypto/ecdsa"
	"crypto/ed25519"
	"crypto/rand"
	"crypto/sha256"
	"encoding/base64"
	"encoding/binary"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"hash"
	"io"
	"math"
	"strconv"
	"strings"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"hulltally/ledger/logfile"
)

// BundleFormat is the header's format name of a bundle.
const BundleFormat = "hulltally-bundle"

// BundleVersion is the bundle format version ExportBundle writes and the
// only one VerifyBundle reads.
const BundleVersion = 2

// bundleVersionNoHits is the earlier version VerifyBundle still reads:
// its ae_hits links carry no hit rows.
const bundleVersionNoHits = 1

// Bundle signature algorithms (the trailer's "algorithm").
const (
	BundleAlgECDSA   = "ecdsa-p256-sha256"
	BundleAlgEd25519 = "ed25519-sha256"
)

// maxBundleLine bounds one line of a bundle (a reading block's data in
// base64 is far smaller): a longer line is refused, not read into memory.
const maxBundleLine = 256 << 20

// BundleHeader is the first line of a bundle.
type BundleHeader struct {
	Type           string    `json:"type"`
	Format         string    `json:"format"`
	Version        int       `json:"version"`
	CreatedAt      time.Time `json:"created_at"`
	Hull           uuid.UUID `json:"hull"`
	Serial         string    `json:"serial"`
	HullRecordedAt time.Time `json:"hull_recorded_at"`
	// ChainLength is the number of links that follow; Head the hex hash
	// of the last (64 zeros when none).
	ChainLength int64  `json:"chain_length"`
	Head        string `json:"head"`
	// Revision is the hull revision in force; SpecJSON its spec, byte for
	// byte as stored.
	Revision int32  `json:"revision"`
	SpecJSON string `json:"spec_json"`
}

// bundleCheckpoint is the checkpoint line.
type bundleCheckpoint struct {
	Type       string      `json:"type"`
	Checkpoint *Checkpoint `json:"checkpoint"`
}

// BundleLink is one link line: a record of the hull's chain.
type BundleLink struct {
	Type string `json:"type"`
	Seq  int64  `json:"seq"`
	Kind string `json:"kind"`
	Key  string `json:"key"`
	Prev string `json:"prev"`
	Hash string `json:"hash"`
	// Canon is the record's canonical bytes (base64 in JSON).
	Canon []byte `json:"canon"`
	// Data is a reading block's encoded readings (reading_block), or the
	// concatenated canonical bytes of a dive's hits (ae_hits).
	Data []byte `json:"data,omitempty"`
}

// BundleSignature is the last line: the operator's signature of the
// SHA-256 of every byte before it.
type BundleSignature struct {
	Type          string `json:"type"`
	Algorithm     string `json:"algorithm"`
	ContentSHA256 string `json:"content_sha256"`
	PublicKey     []byte `json:"public_key"`
	Signature     []byte `json:"signature"`
}

// BundleSummary is what ExportBundle wrote.
type BundleSummary struct {
	Hull   uuid.UUID `json:"hull"`
	Serial string    `json:"serial"`
	// Records is the number of chain links; Blocks of them reading blocks
	// (with their data); DataBytes the blocks' data in bytes.
	Records   int64 `json:"records"`
	Blocks    int64 `json:"blocks"`
	DataBytes int64 `json:"data_bytes"`
	// HitRows is the number of acoustic-emission hits written with their
	// ae_hits links.
	HitRows int64  `json:"hit_rows"`
	Head    string `json:"head"`
	// Checkpoint is the seq of the included checkpoint, 0 when none.
	Checkpoint int64 `json:"checkpoint"`
	// ContentSHA256 is the signed digest.
	ContentSHA256 string `json:"content_sha256"`
}

// ExportBundle writes the hull's bundle (see the format above) to w,
// signed with key (ECDSA P-256 or Ed25519). Everything is read at one
// snapshot; the hull's chain is verified there first (as `verify` does,
// with the count checks), and a hull whose chain does not verify, or that
// no longer holds the included checkpoint's head, is refused with
// ErrChainBroken: a bundle would vouch for it. Each record's canonical
// bytes are rebuilt from its rows by the functions verify uses, and each
// is checked against its link before it is written.
func (l *Ledger) ExportBundle(ctx context.Context, serial string, w io.Writer, key crypto.Signer) (*BundleSummary, error) {
	pubBytes, err := publicKeyBytes(key.Public())
	if err != nil {
		return nil, &InputError{Err: fmt.Errorf("export: %w", err)}
	}
	alg := BundleAlgECDSA
	if _, ok := key.Public().(ed25519.PublicKey); ok {
		alg = BundleAlgEd25519
	}
	sum := &BundleSummary{Serial: serial}
	digest := sha256.New()
	bw := bufio.NewWriterSize(w, 1<<16)
	out := io.MultiWriter(bw, digest)
	line := func(v any) error {
		b, err := json.Marshal(v)
		if err != nil {
			return err
		}
		b = append(b, '\n')
		_, err = out.Write(b)
		return err
	}
	err = l.Snapshot(ctx, func(s *Ledger) error {
		q := s.db
		h := BundleHeader{Type: "header", Format: BundleFormat, Version: BundleVersion, CreatedAt: now(), Serial: serial}
		err := q.QueryRow(ctx, `SELECT h.id, h.recorded_at, r.revision, r.spec_json FROM hulls h JOIN hull_revisions r ON r.hull_id = h.id
			WHERE h.serial = $1 ORDER BY r.revision DESC LIMIT 1`, serial).Scan(&h.Hull, &h.HullRecordedAt, &h.Revision, &h.SpecJSON)
		if errors.Is(err, pgx.ErrNoRows) {
			return fmt.Errorf("export: %w: %q", ErrUnknownHull, serial)
		}
		if err != nil {
			return fmt.Errorf("export %s: reading the hull: %w", serial, err)
		}
		sum.Hull = h.Hull
		_, _, broken, err := verifyHull(ctx, q, h.Hull, serial, h.HullRecordedAt)
		if err != nil {
			return fmt.Errorf("export: %w", err)
		}
		if broken != nil {
			return fmt.Errorf("export refused: %w (hull %s, record %d, %s %s: %s); a bundle would vouch for it", ErrChainBroken, serial, broken.Seq, broken.Kind, broken.Key, broken.Reason)
		}
		links, err := readLinks(ctx, q, h.Hull)
		if err != nil {
			return fmt.Errorf("export %s: %w", serial, err)
		}
		h.ChainLength = int64(len(links))
		h.Head = hex.EncodeToString(make([]byte, sha256.Size))
		if n := len(links); n > 0 {
			h.Head = hex.EncodeToString(links[n-1].hash)
		}
		sum.Records, sum.Head = h.ChainLength, h.Head
		cp, err := latestCheckpointBy(ctx, q, pubBytes)
		if err != nil {
			return fmt.Errorf("export %s: %w", serial, err)
		}
		if cp != nil {
			if why := cp.checkStatement(key.Public()); why != "" {
				return fmt.Errorf("export refused: %w: checkpoint %d: %s", ErrChainBroken, cp.Seq, why)
			}
			if why := checkpointCovers(cp, h.Hull, serial, func(seq int64) []byte {
				if seq < 1 || seq > int64(len(links)) {
					return nil
				}
				return links[seq-1].hash
			}); why != "" {
				return fmt.Errorf("export refused: %w: checkpoint %d: %s", ErrChainBroken, cp.Seq, why)
			}
			sum.Checkpoint = cp.Seq
		}
		if err := line(h); err != nil {
			return err
		}
		if cp != nil {
			if err := line(bundleCheckpoint{Type: "checkpoint", Checkpoint: cp}); err != nil {
				return err
			}
		}
		for i := range links {
			k := &links[i]
			bl := BundleLink{Type: "link", Seq: k.seq, Kind: k.kind, Key: k.key, Prev: hex.EncodeToString(k.prev), Hash: hex.EncodeToString(k.hash)}
			var why string
			switch k.kind {
			case "reading_block":
				bl.Canon, bl.Data, why, err = blockWithData(ctx, q, k.key)
			case "ae_hits":
				var n int64
				bl.Canon, bl.Data, n, why, err = hitsWithData(ctx, q, k.key)
				sum.HitRows += n
			default:
				bl.Canon, _, why, err = recordCanon(ctx, q, k.kind, k.key)
			}
			if err != nil {
				return fmt.Errorf("export %s record %d: %w", serial, k.seq, err)
			}
			if why != "" || !bytes.Equal(chainHash(k.prev, bl.Canon), k.hash) {
				// verifyHull passed in this snapshot: this cannot happen
				// unless the two reads disagree. Refuse rather than sign.
				return fmt.Errorf("export refused: %w (hull %s, record %d, %s %s: %s)", ErrChainBroken, serial, k.seq, k.kind, k.key, orStr(why, "record content does not match its hash"))
			}
			if bl.Data != nil && k.kind == "reading_block" {
				sum.Blocks++
				sum.DataBytes += int64(len(bl.Data))
			}
			if err := line(bl); err != nil {
				return err
			}
		}
		return nil
	})
	if err != nil {
		return nil, err
	}
	d := digest.Sum(nil)
	sig, err := signDigest(key, d)
	if err != nil {
		return nil, fmt.Errorf("export: signing: %w", err)
	}
	sum.ContentSHA256 = hex.EncodeToString(d)
	tr, err := json.Marshal(BundleSignature{Type: "signature", Algorithm: alg, ContentSHA256: sum.ContentSHA256, PublicKey: pubBytes, Signature: sig})
	if err != nil {
		return nil, err
	}
	if _, err := bw.Write(append(tr, '\n')); err != nil {
		return nil, fmt.Errorf("export: writing: %w", err)
	}
	if err := bw.Flush(); err != nil {
		return nil, fmt.Errorf("export: writing: %w", err)
	}
	return sum, nil
}

func orStr(a, b string) string {
	if a != "" {
		return a
	}
	return b
}

// readLinks reads the hull's chain in seq order.
func readLinks(ctx context.Context, q querier, hull uuid.UUID) ([]chainLink, error) {
	rows, err := q.Query(ctx, "SELECT seq, kind, record_key, prev_hash, hash FROM audit_chain WHERE hull_id = $1 ORDER BY seq", hull)
	if err != nil {
		return nil, fmt.Errorf("reading the chain: %w", err)
	}
	links, err := pgx.CollectRows(rows, func(r pgx.CollectableRow) (chainLink, error) {
		var k chainLink
		err := r.Scan(&k.seq, &k.kind, &k.key, &k.prev, &k.hash)
		return k, err
	})
	if err != nil {
		return nil, fmt.Errorf("reading the chain: %w", err)
	}
	return links, nil
}

// blockWithData is recordCanon's reading_block case, keeping the data.
func blockWithData(ctx context.Context, q querier, key string) ([]byte, []byte, string, error) {
	id, no, ok := splitKey(key)
	if !ok {
		return nil, nil, "bad record key", nil
	}
	var hullID uuid.UUID
	var first, t0, t1 int64
	var n int32
	var data, sum []byte
	err := q.QueryRow(ctx, "SELECT hull_id, first_sample, samples, t_first_ns, t_last_ns, data, sha256 FROM reading_blocks WHERE dive_id = $1 AND block_no = $2", id, no).Scan(&hullID, &first, &n, &t0, &t1, &data, &sum)
	if errors.Is(err, pgx.ErrNoRows) {
		return nil, nil, "reading block is missing", nil
	}
	if err != nil {
		return nil, nil, "", err
	}
	actual := sha256.Sum256(data)
	if !bytes.Equal(actual[:], sum) {
		return nil, nil, "reading block data does not match its stored SHA-256 (the readings were changed)", nil
	}
	if data == nil {
		data = []byte{}
	}
	return blockCanon(id, hullID, int32(no), first, n, t0, t1, actual[:]), data, "", nil
}

// hitsWithData is recordCanon's ae_hits case, keeping the hits' canonical
// bytes (concatenated in seq order) and their number.
func hitsWithData(ctx context.Context, q querier, key string) ([]byte, []byte, int64, string, error) {
	id, err := uuid.Parse(key)
	if err != nil {
		return nil, nil, 0, "bad record key", nil
	}
	rows, err := q.Query(ctx, "SELECT seq, t_ns, channel, amplitude_db, energy, counts, duration_us, rise_us, event FROM ae_hits WHERE dive_id = $1 ORDER BY seq", id)
	if err != nil {
		return nil, nil, 0, "", err
	}
	defer rows.Close()
	data := []byte{}
	var n int32
	for rows.Next() {
		var seq, ch int32
		var h logfile.Hit
		var ev string
		if err := rows.Scan(&seq, &h.TimeNS, &ch, &h.AmplitudeDB, &h.Energy, &h.Counts, &h.DurationUS, &h.RiseUS, &ev); err != nil {
			return nil, nil, 0, "", err
		}
		e, ok := logfile.ParseEvent(ev)
		if !ok {
			return nil, nil, 0, fmt.Sprintf("hit %d has an unknown event %q", seq, ev), nil
		}
		h.Channel, h.Event = int(ch), e
		data = hitBytes(data, seq, &h)
		n++
	}
	if err := rows.Err(); err != nil {
		return nil, nil, 0, "", err
	}
	sum := sha256.Sum256(data)
	return hitsCanon(id, n, sum[:]), data, int64(n), "", nil
}

// latestCheckpointBy is the newest checkpoint of the checkpoints table
// signed by the key pub (publicKeyBytes form), nil when there is none.
func latestCheckpointBy(ctx context.Context, q querier, pub []byte) (*Checkpoint, error) {
	var stmt string
	var sig, pk, h []byte
	err := q.QueryRow(ctx, "SELECT statement, signature, public_key, hash FROM checkpoints WHERE public_key = $1 ORDER BY id DESC LIMIT 1", pub).Scan(&stmt, &sig, &pk, &h)
	if errors.Is(err, pgx.ErrNoRows) {
		return nil, nil
	}
	if err != nil {
		return nil, fmt.Errorf("reading the latest checkpoint: %w", err)
	}
	cp, err := parseStatement(stmt)
	if err != nil {
		return nil, fmt.Errorf("the latest checkpoint: %w", err)
	}
	cp.Signature = base64.StdEncoding.EncodeToString(sig)
	cp.PublicKey = base64.StdEncoding.EncodeToString(pk)
	cp.Hash = hex.EncodeToString(h)
	return cp, nil
}

// parseStatement reads a checkpoint statement back into its fields.
func parseStatement(stmt string) (*Checkpoint, error) {
	lines := strings.Split(stmt, "\n")
	if len(lines) < 7 || (lines[0] != CheckpointVersion && lines[0] != CheckpointVersionV1) || lines[len(lines)-1] != "" {
		return nil, errors.New("not a checkpoint statement")
	}
	// A v2 statement ends with the register's and the legacy seal's lines.
	tail := 0
	if lines[0] == CheckpointVersion {
		tail = 2
	}
	cp := &Checkpoint{Statement: stmt, Hulls: []CheckpointHull{}}
	field := func(i int, name string) (string, error) {
		v, ok := strings.CutPrefix(lines[i], name+" ")
		if !ok {
			return "", fmt.Errorf("statement line %d is not %q", i+1, name)
		}
		return v, nil
	}
	var err error
	var v string
	if v, err = field(1, "seq"); err != nil {
		return nil, err
	}
	if cp.Seq, err = strconv.ParseInt(v, 10, 64); err != nil {
		return nil, fmt.Errorf("statement seq: %w", err)
	}
	if v, err = field(2, "time"); err != nil {
		return nil, err
	}
	if cp.Time, err = time.Parse("2006-01-02T15:04:05.000000Z", v); err != nil {
		return nil, fmt.Errorf("statement time: %w", err)
	}
	if cp.Prev, err = field(3, "prev"); err != nil {
		return nil, err
	}
	if cp.Root, err = field(4, "root"); err != nil {
		return nil, err
	}
	if v, err = field(5, "hulls"); err != nil {
		return nil, err
	}
	n, err := strconv.Atoi(v)
	if err != nil || n < 0 || n != len(lines)-7-tail {
		return nil, errors.New("statement hull count does not match its hull lines")
	}
	for i := 6; i < 6+n; i++ {
		f := strings.Split(lines[i], " ")
		if len(f) != 5 || f[0] != "hull" {
			return nil, fmt.Errorf("statement line %d is not a hull line", i+1)
		}
		var ch CheckpointHull
		if ch.Hull, err = uuid.Parse(f[1]); err != nil {
			return nil, fmt.Errorf("statement line %d: %w", i+1, err)
		}
		ch.Serial, ch.Head = f[2], f[4]
		if ch.Length, err = strconv.ParseInt(f[3], 10, 64); err != nil {
			return nil, fmt.Errorf("statement line %d: %w", i+1, err)
		}
		cp.Hulls = append(cp.Hulls, ch)
	}
	if tail == 2 {
		reg := strings.Split(lines[6+n], " ")
		leg := strings.Split(lines[7+n], " ")
		if len(reg) != 3 || reg[0] != "register" || len(leg) != 3 || leg[0] != "legacy" {
			return nil, errors.New("statement register lines malformed")
		}
		r := &CheckpointRegister{Head: reg[2], LegacyDigest: leg[2]}
		if r.Length, err = strconv.ParseInt(reg[1], 10, 64); err != nil {
			return nil, fmt.Errorf("statement register length: %w", err)
		}
		if r.LegacyCount, err = strconv.ParseInt(leg[1], 10, 64); err != nil {
			return nil, fmt.Errorf("statement legacy count: %w", err)
		}
		cp.Register = r
	}
	return cp, nil
}

// checkpointCovers says why the chain (hashAt gives the hash of link seq,
// nil when there is none) does not hold cp's head for the hull, "" when it
// does or when cp does not name the hull.
func checkpointCovers(cp *Checkpoint, hull uuid.UUID, serial string, hashAt func(int64) []byte) string {
	for _, h := range cp.Hulls {
		if h.Hull != hull {
			continue
		}
		if h.Serial != serial {
			return fmt.Sprintf("the checkpoint names hull %s as serial %s, not %s", hull, h.Serial, serial)
		}
		if h.Length == 0 {
			return ""
		}
		got := hashAt(h.Length)
		if got == nil {
			return fmt.Sprintf("the chain holds no record %d: the checkpoint says the hull's chain had %d records (records were removed)", h.Length, h.Length)
		}
		if hex.EncodeToString(got) != h.Head {
			return fmt.Sprintf("record %d has hash %x; the checkpoint says %s: records up to it were rewritten", h.Length, got, h.Head)
		}
		return ""
	}
	return ""
}

// signDigest signs a 32-byte SHA-256 digest: ECDSA P-256 (ASN.1) with the
// digest as the hash, or Ed25519 over the digest's bytes.
func signDigest(key crypto.Signer, d []byte) ([]byte, error) {
	switch key.Public().(type) {
	case ed25519.PublicKey:
		return key.Sign(rand.Reader, d, crypto.Hash(0))
	case *ecdsa.PublicKey:
		return key.Sign(rand.Reader, d, crypto.SHA256)
	}
	return nil, fmt.Errorf("a %T is not a bundle signing key", key.Public())
}

func verifyDigest(pub crypto.PublicKey, alg string, d, sig []byte) bool {
	switch k := pub.(type) {
	case ed25519.PublicKey:
		return alg == BundleAlgEd25519 && len(k) == ed25519.PublicKeySize && ed25519.Verify(k, d, sig)
	case *ecdsa.PublicKey:
		return alg == BundleAlgECDSA && ecdsa.VerifyASN1(k, d, sig)
	}
	return false
}

// BundleResult is what VerifyBundle found.
type BundleResult struct {
	// OK: the signature holds under the given key and every check of the
	// content passed.
	OK bool `json:"ok"`
	// SignatureOK: the trailer's signature of the content's SHA-256
	// verifies under the given key, and the content hashes to it.
	SignatureOK bool `json:"signature_ok"`
	// SignatureReason says why not, when SignatureOK is false.
	SignatureReason string `json:"signature_reason,omitempty"`
	// FirstBroken is the first failure in the content (nil when none).
	FirstBroken *Broken `json:"first_broken"`
	// Problem is the reason to give: the signature's when the content is
	// as signed but the signature does not verify under the given key;
	// else the first content failure; else the signature's.
	Problem string `json:"problem,omitempty"`

	Hull    string `json:"hull"`
	Serial  string `json:"serial"`
	Records int64  `json:"records"`
	Blocks  int64  `json:"blocks"`
	// HitRows is the number of acoustic-emission hits re-checked against
	// their records' count and SHA-256; HitsUnchecked the ae_hits records
	// of a version 1 bundle, which carries no hit rows (their hits are
	// vouched for by the digest alone).
	HitRows       int64 `json:"hit_rows"`
	HitsUnchecked int64 `json:"hits_unchecked"`
	// Damage is the damage re-computed from the bundle's own cycles and
	// compared with its assessments (nil when the chain did not verify,
	// so that nothing was re-computed).
	Damage *BundleDamageResult `json:"damage"`
	// hashes are the chain's link hashes in order (seq 1 first), for
	// HashAt.
	hashes [][]byte
	// Kinds counts the records by kind.
	Kinds map[string]int64 `json:"kinds"`
	Head  string           `json:"head"`
	// Checkpoint is the seq of the included checkpoint (0 when none);
	// CheckpointLength the hull's checkpointed chain length (0 when the
	// checkpoint does not name the hull: then it vouches for none of its
	// records). Records after CheckpointLength rest on the bundle's
	// signature alone.
	Checkpoint       int64 `json:"checkpoint"`
	CheckpointLength int64 `json:"checkpoint_length"`
	CheckpointCovers bool  `json:"checkpoint_covers"`
	// CreatedAt is the header's export time.
	CreatedAt time.Time `json:"created_at"`
}

// ErrNotBundle is returned by VerifyBundle when the input cannot be read
// as a bundle at all (not JSON lines, not gzip, empty).
var ErrNotBundle = errors.New("not a hulltally bundle")

// VerifyBundle checks a bundle read from r (plain or gzip) under pub
// (ECDSA P-256 or Ed25519), without any database: see the format comment
// at the top of this file for every check. A bundle that fails a check is
// a result with OK false and the reason, not an error; the error is for a
// read failure. It reads the bundle once, streaming, holding one line at
// a time.
func VerifyBundle(r io.Reader, pub crypto.PublicKey) (*BundleResult, error) {
	if _, err := publicKeyBytes(pub); err != nil {
		return nil, &InputError{Err: fmt.Errorf("verify bundle: %w", err)}
	}
	br := bufio.NewReaderSize(r, 1<<16)
	if magic, _ := br.Peek(2); len(magic) == 2 && magic[0] == 0x1f && magic[1] == 0x8b {
		zr, err := gzip.NewReader(br)
		if err != nil {
			return nil, fmt.Errorf("verify bundle: %w: gzip: %w", ErrNotBundle, err)
		}
		defer zr.Close()
		br = bufio.NewReaderSize(zr, 1<<16)
	}
	v := &bundleVerifier{res: &BundleResult{Kinds: map[string]int64{}}, pub: pub, digest: sha256.New(), prev: make([]byte, sha256.Size), dmg: newDamageCollector()}
	if err := v.run(br); err != nil {
		return nil, err
	}
	return v.res, nil
}

type bundleVerifier struct {
	res    *BundleResult
	pub    crypto.PublicKey
	digest hash.Hash
	hdr    *BundleHeader
	cp     *Checkpoint
	cpLen  int64
	cpHead string
	prev   []byte
	n      int64
	sig    *BundleSignature
	spec   bool // the spec was found in its revision record
	dmg    *damageCollector
}

// fail records the first content failure.
func (v *bundleVerifier) fail(seq int64, kind, key, reason string, a ...any) {
	if v.res.FirstBroken != nil {
		return
	}
	v.res.FirstBroken = &Broken{Hull: v.res.Serial, Seq: seq, Kind: kind, Key: key, Reason: fmt.Sprintf(reason, a...)}
}

func (v *bundleVerifier) run(br *bufio.Reader) error {
	lineNo := 0
	for {
		b, err := readLine(br)
		if err == io.EOF {
			break
		}
		if err != nil {
			return fmt.Errorf("verify bundle: reading line %d: %w", lineNo+1, err)
		}
		lineNo++
		if v.sig != nil {
			v.fail(0, "", "", "line %d follows the signature: content after the signature is not signed", lineNo)
			break
		}
		var typ struct {
			Type string `json:"type"`
		}
		if err := json.Unmarshal(b, &typ); err != nil {
			if lineNo == 1 {
				return fmt.Errorf("verify bundle: %w: line 1 is not JSON: %v", ErrNotBundle, err)
			}
			v.fail(0, "", "", "line %d is not JSON: %v", lineNo, err)
			v.digest.Write(b)
			continue
		}
		if typ.Type == "signature" {
			var s BundleSignature
			if err := strictJSON(b, &s); err != nil {
				v.fail(0, "", "", "the signature line is malformed: %v", err)
				break
			}
			v.sig = &s
			continue
		}
		v.digest.Write(b)
		if lineNo == 1 && typ.Type != "header" {
			return fmt.Errorf("verify bundle: %w: the first line is a %q, not the header", ErrNotBundle, typ.Type)
		}
		switch typ.Type {
		case "header":
			v.header(b, lineNo)
		case "checkpoint":
			v.checkpoint(b, lineNo)
		case "link":
			v.link(b, lineNo)
		default:
			v.fail(0, "", "", "line %d has an unknown type %q", lineNo, typ.Type)
		}
	}
	v.finish()
	return nil
}

// readLine reads one "\n"-terminated line (with its "\n"), refusing one
// longer than maxBundleLine. A last line without "\n" is returned as is.
func readLine(br *bufio.Reader) ([]byte, error) {
	var out []byte
	for {
		chunk, err := br.ReadSlice('\n')
		out = append(out, chunk...)
		if len(out) > maxBundleLine {
			return nil, fmt.Errorf("a line longer than %d bytes", maxBundleLine)
		}
		if err == bufio.ErrBufferFull {
			continue
		}
		if err == io.EOF && len(out) > 0 {
			return out, nil
		}
		return out, err
	}
}

func strictJSON(b []byte, v any) error {
	dec := json.NewDecoder(bytes.NewReader(b))
	dec.DisallowUnknownFields()
	if err := dec.Decode(v); err != nil {
		return err
	}
	if dec.More() {
		return errors.New("more than one JSON value on the line")
	}
	return nil
}

func (v *bundleVerifier) header(b []byte, lineNo int) {
	if v.hdr != nil || lineNo != 1 {
		v.fail(0, "", "", "line %d is a second header", lineNo)
		return
	}
	var h BundleHeader
	if err := strictJSON(b, &h); err != nil {
		v.fail(0, "", "", "the header is malformed: %v", err)
		v.hdr = &BundleHeader{}
		return
	}
	v.hdr = &h
	v.res.Hull, v.res.Serial, v.res.CreatedAt = h.Hull.String(), h.Serial, h.CreatedAt
	if h.Format != BundleFormat {
		v.fail(0, "", "", "the header names format %q, not %q", h.Format, BundleFormat)
	} else if h.Version != BundleVersion && h.Version != bundleVersionNoHits {
		v.fail(0, "", "", "bundle version %d is not one this hulltally reads (versions %d and %d)", h.Version, bundleVersionNoHits, BundleVersion)
	}
}

func (v *bundleVerifier) checkpoint(b []byte, lineNo int) {
	if v.cp != nil || v.n > 0 {
		v.fail(0, "checkpoint", "", "line %d: a checkpoint must come once, before the links", lineNo)
		return
	}
	var c bundleCheckpoint
	if err := strictJSON(b, &c); err != nil || c.Checkpoint == nil {
		v.fail(0, "checkpoint", "", "the checkpoint line is malformed: %v", err)
		return
	}
	cp := c.Checkpoint
	v.cp = cp
	v.res.Checkpoint = cp.Seq
	if why := cp.checkStatement(v.pub); why != "" {
		v.fail(0, "checkpoint", strconv.FormatInt(cp.Seq, 10), "checkpoint %d: %s", cp.Seq, why)
		return
	}
	for _, h := range cp.Hulls {
		if h.Hull == v.hdr.Hull {
			if h.Serial != v.hdr.Serial {
				v.fail(0, "checkpoint", strconv.FormatInt(cp.Seq, 10), "checkpoint %d names hull %s as serial %s, not %s", cp.Seq, h.Hull, h.Serial, v.hdr.Serial)
				return
			}
			v.res.CheckpointCovers = true
			v.cpLen, v.cpHead = h.Length, h.Head
			v.res.CheckpointLength = h.Length
		}
	}
}

func (v *bundleVerifier) link(b []byte, lineNo int) {
	var k BundleLink
	if err := strictJSON(b, &k); err != nil {
		v.fail(v.n+1, "", "", "line %d: a malformed link: %v", lineNo, err)
		return
	}
	if v.res.FirstBroken != nil {
		// Past the first failure only the signature is still checked.
		v.n++
		return
	}
	want := v.n + 1
	brk := func(reason string, a ...any) { v.fail(k.Seq, k.Kind, k.Key, reason, a...) }
	if k.Seq != want {
		brk("sequence gap: expected %d", want)
		return
	}
	prev, err1 := hex.DecodeString(k.Prev)
	hsh, err2 := hex.DecodeString(k.Hash)
	if err1 != nil || err2 != nil || len(hsh) != sha256.Size {
		brk("prev or hash is not a hex SHA-256")
		return
	}
	if !bytes.Equal(prev, v.prev) {
		brk("previous-hash link does not match the record before it")
		return
	}
	if !bytes.Equal(chainHash(prev, k.Canon), hsh) {
		brk("record content does not match its hash (the canonical bytes were changed)")
		return
	}
	fields, err := decodeCanon(k.Canon)
	if err != nil {
		brk("the canonical bytes do not decode: %v", err)
		return
	}
	if len(fields) == 0 || fields[0].tag != 's' || fields[0].s != k.Kind {
		brk("the canonical bytes are of another kind than the link's")
		return
	}
	withData := k.Kind == "reading_block" || (k.Kind == "ae_hits" && v.hdr.Version >= BundleVersion)
	if (k.Data != nil) != withData {
		brk("data on a record that carries none, or a reading block or acoustic-emission hits record without its data")
		return
	}
	switch k.Kind {
	case "hull":
		if want != 1 || len(fields) != 4 || fields[1].u != v.hdr.Hull || fields[2].s != v.hdr.Serial || k.Key != v.hdr.Hull.String() {
			brk("the hull record is not the header's hull %s (%s), or not first", v.hdr.Serial, v.hdr.Hull)
			return
		}
	case "reading_block":
		id, no, ok := splitKey(k.Key)
		if !ok || len(fields) != 9 || fields[1].tag != 'u' || fields[1].u != id || fields[2].u != v.hdr.Hull || fields[3].i != no || fields[8].tag != 'b' {
			brk("the reading block's canonical bytes do not name its key's dive and block, or this hull")
			return
		}
		sum := sha256.Sum256(k.Data)
		if !bytes.Equal(sum[:], []byte(fields[8].s)) {
			brk("reading block data does not match the SHA-256 in its canonical bytes (the readings were changed)")
			return
		}
		v.res.Blocks++
	case "ae_hits":
		if len(fields) != 4 || fields[1].tag != 'u' || k.Key != fields[1].u.String() || fields[2].tag != 'i' || fields[3].tag != 'b' {
			brk("the acoustic-emission hits record's canonical bytes do not name its key's dive")
			return
		}
		if k.Data == nil {
			v.res.HitsUnchecked++
			break
		}
		n, why := checkHitRows(k.Data, fields[2].i, []byte(fields[3].s))
		if why != "" {
			brk("%s", why)
			return
		}
		v.res.HitRows += n
	case "hull_revision":
		if len(fields) > 13 && fields[1].u == v.hdr.Hull && fields[2].i == int64(v.hdr.Revision) && fields[13].tag == 's' {
			if fields[13].s != v.hdr.SpecJSON {
				brk("the header's spec is not that of hull revision %d", v.hdr.Revision)
				return
			}
			v.spec = true
		}
	}
	if want == 1 && k.Kind != "hull" {
		brk("the chain does not begin with the hull record")
		return
	}
	if v.cp != nil && want == v.cpLen && hex.EncodeToString(hsh) != v.cpHead {
		brk("record %d has hash %x; checkpoint %d says %s: records up to it were rewritten", want, hsh, v.cp.Seq, v.cpHead)
		return
	}
	if why := v.dmg.add(want, k.Kind, fields); why != "" {
		brk("%s", why)
		return
	}
	v.n++
	v.res.Records = v.n
	v.res.Kinds[k.Kind]++
	v.res.hashes = append(v.res.hashes, hsh)
	v.prev = hsh
	v.res.Head = hex.EncodeToString(hsh)
}

func (v *bundleVerifier) finish() {
	res := v.res
	if res.FirstBroken == nil {
		h := v.hdr
		switch {
		case h == nil:
			v.fail(0, "", "", "the bundle has no header")
		case v.n != h.ChainLength:
			v.fail(v.n+1, "", "", "the bundle holds %d records; its header says %d (records were removed or added)", v.n, h.ChainLength)
		case hex.EncodeToString(v.prev) != h.Head:
			v.fail(v.n, "", "", "the chain's head is %x; the header says %s", v.prev, h.Head)
		case v.cp != nil && v.cpLen > v.n:
			v.fail(v.n+1, "", "", "the chain holds %d records; checkpoint %d says the hull's chain had %d (records were removed)", v.n, v.cp.Seq, v.cpLen)
		case !v.spec:
			v.fail(0, "hull_revision", "", "no hull revision %d record in the chain carries the header's spec", h.Revision)
		default:
			d := v.dmg.result()
			res.Damage = d
			if x := d.FirstDisagreement; x != nil {
				v.fail(x.Seq, "assessment", x.Assessment, "%s", x.String())
			}
		}
	}
	if res.Head == "" {
		res.Head = hex.EncodeToString(v.prev)
	}
	switch s := v.sig; {
	case s == nil:
		res.SignatureReason = "the bundle has no signature line (it is unsigned or cut short)"
	case hex.EncodeToString(v.digest.Sum(nil)) != s.ContentSHA256:
		res.SignatureReason = "the content's SHA-256 is not the signed one: the bundle was altered after it was signed"
	default:
		d, _ := hex.DecodeString(s.ContentSHA256)
		if verifyDigest(v.pub, s.Algorithm, d, s.Signature) {
			res.SignatureOK = true
		} else {
			res.SignatureReason = "the signature does not verify under the given key (signed by another key, or the signature was altered)"
		}
	}
	res.OK = res.SignatureOK && res.FirstBroken == nil
	// The content hashes to the signed digest but the signature does not
	// verify: the key (or the signature itself) is the problem, and the
	// content's own failures (a checkpoint signed by the right key reads
	// as "another key") follow from it.
	if v.sig != nil && !res.SignatureOK && hex.EncodeToString(v.digest.Sum(nil)) == v.sig.ContentSHA256 {
		res.Problem = res.SignatureReason
		return
	}
	if b := res.FirstBroken; b != nil {
		res.Problem = b.Reason
		if b.Seq > 0 {
			res.Problem = fmt.Sprintf("record %d (%s %s): %s", b.Seq, b.Kind, b.Key, b.Reason)
		}
	} else if !res.SignatureOK {
		res.Problem = res.SignatureReason
	}
}

// canonField is one decoded field of canonical bytes: tag 's' and 'b'
// (s holds the bytes), 'i', 't' (i), 'f', 'u', 'n', 'T', 'F', 'l' (l).
type canonField struct {
	tag byte
	s   string
	i   int64
	f   float64
	u   uuid.UUID
	l   []string
}

// decodeCanon splits canonical bytes (chain.go's canon) into fields; it
// refuses an unknown tag, a truncated field and trailing bytes.
func decodeCanon(b []byte) ([]canonField, error) {
	var out []canonField
	lenPrefixed := func() (string, error) {
		n, k := binary.Uvarint(b)
		if k <= 0 || n > uint64(len(b)-k) {
			return "", errors.New("a length runs past the end")
		}
		s := string(b[k : k+int(n)])
		b = b[k+int(n):]
		return s, nil
	}
	for len(b) > 0 {
		f := canonField{tag: b[0]}
		b = b[1:]
		switch f.tag {
		case 's', 'b':
			s, err := lenPrefixed()
			if err != nil {
				return nil, err
			}
			f.s = s
		case 'i', 't', 'f':
			if len(b) < 8 {
				return nil, errors.New("a number runs past the end")
			}
			u := binary.BigEndian.Uint64(b)
			f.i = int64(u)
			f.f = math.Float64frombits(u)
			b = b[8:]
		case 'u':
			if len(b) < 16 {
				return nil, errors.New("a UUID runs past the end")
			}
			copy(f.u[:], b)
			b = b[16:]
		case 'n', 'T', 'F':
		case 'l':
			n, k := binary.Uvarint(b)
			if k <= 0 || n > uint64(len(b)) {
				return nil, errors.New("a list runs past the end")
			}
			b = b[k:]
			for j := uint64(0); j < n; j++ {
				if len(b) == 0 || b[0] != 's' {
					return nil, errors.New("a list item is not a string")
				}
				b = b[1:]
				s, err := lenPrefixed()
				if err != nil {
					return nil, err
				}
				f.l = append(f.l, s)
			}
		default:
			return nil, fmt.Errorf("unknown field tag %q", f.tag)
		}
		out = append(out, f)
	}
	return out, nil
}

// HashAt is the hex hash of the bundle's chain link seq (from 1); false
// when the bundle's chain (as far as it verified) has no such link. A
// report's signed chain head for the hull can be checked against it.
func (r *BundleResult) HashAt(seq int64) (string, bool) {
	if r == nil || seq < 1 || seq > int64(len(r.hashes)) {
		return "", false
	}
	return hex.EncodeToString(r.hashes[seq-1]), true
}
