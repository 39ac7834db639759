package merkle

import (
	"crypto/sha256"
	"encoding/hex"
	"testing"
)

// ctLeaves and ctRoots are the reference inputs and tree heads published
// with the certificate transparency log test data (the roots of the
// trees of the first 1..8 leaves); the same values appear in many
// independent implementations of RFC 6962. ctRoots[0] is the empty tree.
var ctLeaves = []string{"", "00", "10", "2021", "3031", "40414243", "5051525354555657", "606162636465666768696a6b6c6d6e6f"}

var ctRoots = []string{
	"e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855",
	"6e340b9cffb37a989ca544e6bb780a2c78901d3fb33738768511a30617afa01d",
	"fac54203e7cc696cf0dfcb42c92a1d9dbaf70ad9e621f4bd8d98662f00e3c125",
	"aeb6bcfe274b70a14fb067a5e5578264db0fa9b51af5e0ba159158f329e06e77",
	"d37ee418976dd95753c1c73862b9398fa2a2cf9b4ff0fdfe8b30cd95209614b7",
	"4e3bbb1f7b478dcfe71fb631631519a3bca12c9aefca1612bfce4c13a86264d4",
	"76e67dadbcdf1e10e1b74ddc608abd2f98dfb16fbce75277b5232a127f2087ef",
	"ddb89be403809e325750d3d263cd78929c2942b7942a34b77e122c9594a74c8c",
	"5dc9da79a70659a9ad559cb701ded9a2ab9d823aad2f4960cfe370eff4604328",
}

func leaves(t *testing.T, n int) [][]byte {
	t.Helper()
	out := make([][]byte, n)
	for i := range out {
		b, err := hex.DecodeString(ctLeaves[i])
		if err != nil {
			t.Fatal(err)
		}
		out[i] = b
	}
	return out
}

func sha(parts ...[]byte) Hash {
	h := sha256.New()
	for _, p := range parts {
		h.Write(p)
	}
	var out Hash
	h.Sum(out[:0])
	return out
}

func TestReferenceRoots(t *testing.T) {
	for n := 0; n <= 8; n++ {
		got := Root(leaves(t, n))
		if hex.EncodeToString(got[:]) != ctRoots[n] {
			t.Errorf("tree of %d leaves: root %x, want %s", n, got, ctRoots[n])
		}
	}
}

// TestByHand builds the trees from SHA-256 directly, following the
// definition of RFC 6962 §2.1 and nothing of this package.
func TestByHand(t *testing.T) {
	// Empty tree: SHA-256 of the empty string.
	if got, want := EmptyRoot(), sha(); got != want {
		t.Errorf("empty: %x want %x", got, want)
	}
	if got := Root(nil); got != sha() {
		t.Errorf("Root(nil) = %x", got)
	}
	a, b, c, d, e, f, g := []byte("a"), []byte("b"), []byte("c"), []byte("d"), []byte("e"), []byte("f"), []byte("g")
	leaf := func(p []byte) Hash { return sha([]byte{0}, p) }
	node := func(l, r Hash) Hash { return sha([]byte{1}, l[:], r[:]) }

	// One leaf: the leaf hash, not the bare SHA-256 of the leaf.
	if got := Root([][]byte{a}); got != leaf(a) || got == sha(a) {
		t.Errorf("one leaf: %x", got)
	}
	// Three leaves: k = 2, so ((a b) c).
	want3 := node(node(leaf(a), leaf(b)), leaf(c))
	if got := Root([][]byte{a, b, c}); got != want3 {
		t.Errorf("three leaves: %x want %x", got, want3)
	}
	// Seven leaves: k = 4, so ((a b)(c d)) (((e f) g)).
	want7 := node(node(node(leaf(a), leaf(b)), node(leaf(c), leaf(d))), node(node(leaf(e), leaf(f)), leaf(g)))
	if got := Root([][]byte{a, b, c, d, e, f, g}); got != want7 {
		t.Errorf("seven leaves: %x want %x", got, want7)
	}
	// Order matters: swapping two leaves changes the root.
	if Root([][]byte{b, a, c}) == want3 {
		t.Error("swapped leaves give the same root")
	}
	// A leaf that is the concatenation of two leaf hashes must not pass
	// for the interior node above them (the 0x00/0x01 prefixes).
	la, lb := leaf(a), leaf(b)
	if Root([][]byte{append(la[:], lb[:]...)}) == node(la, lb) {
		t.Error("a leaf hashes like an interior node")
	}
}

func TestReferenceInclusion(t *testing.T) {
	// Leaf 0 of the tree of 8 reference leaves (the published path).
	want := []string{
		"96a296d224f285c67bee93c30f8a309157f0daa35dc5b87e410b78630a09cfc7",
		"5f083f0a1a33ca076a95279832580db3e0ef4584bdff1f54c8a360f50de3031e",
		"6b47aaf29ee3c2af9af889bc1fb9254dabd31177f16232dd6aab035ca39bf6e4",
	}
	ls := leaves(t, 8)
	p, err := InclusionProof(ls, 0)
	if err != nil {
		t.Fatal(err)
	}
	if len(p) != len(want) {
		t.Fatalf("path of %d hashes, want %d", len(p), len(want))
	}
	for i := range p {
		if hex.EncodeToString(p[i][:]) != want[i] {
			t.Errorf("path[%d] = %x want %s", i, p[i], want[i])
		}
	}
}

// TestInclusionEverySize: every leaf's proof verifies in every tree of
// 1..20 leaves, and a wrong leaf, index, root or path fails.
func TestInclusionEverySize(t *testing.T) {
	for n := 1; n <= 20; n++ {
		ls := make([][]byte, n)
		for i := range ls {
			ls[i] = []byte{byte(i), byte(i * 7)}
		}
		root := Root(ls)
		for i := 0; i < n; i++ {
			p, err := InclusionProof(ls, i)
			if err != nil {
				t.Fatal(err)
			}
			lh := LeafHash(ls[i])
			if !VerifyInclusion(lh, uint64(i), uint64(n), p, root) {
				t.Fatalf("n=%d i=%d: proof does not verify", n, i)
			}
			if VerifyInclusion(LeafHash([]byte("other")), uint64(i), uint64(n), p, root) {
				t.Errorf("n=%d i=%d: another leaf verifies", n, i)
			}
			if n > 1 && VerifyInclusion(lh, uint64((i+1)%n), uint64(n), p, root) {
				t.Errorf("n=%d i=%d: wrong index verifies", n, i)
			}
			// (The size is bound only through the path's shape and the
			// root; an index outside the size is refused outright.)
			if VerifyInclusion(lh, uint64(i), uint64(i), p, root) {
				t.Errorf("n=%d i=%d: index outside the size verifies", n, i)
			}
			if VerifyInclusion(lh, uint64(i), uint64(n), p, sha([]byte("x"))) {
				t.Errorf("n=%d i=%d: wrong root verifies", n, i)
			}
			if len(p) > 0 {
				bad := append([]Hash(nil), p...)
				bad[0][0] ^= 1
				if VerifyInclusion(lh, uint64(i), uint64(n), bad, root) {
					t.Errorf("n=%d i=%d: altered path verifies", n, i)
				}
				if VerifyInclusion(lh, uint64(i), uint64(n), p[:len(p)-1], root) {
					t.Errorf("n=%d i=%d: shortened path verifies", n, i)
				}
			}
		}
		if _, err := InclusionProof(ls, n); err == nil {
			t.Errorf("n=%d: index n gave a proof", n)
		}
	}
}
