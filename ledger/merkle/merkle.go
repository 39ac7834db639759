// Package merkle computes the Merkle tree hash of an ordered list of
// leaves in the manner of RFC 6962 §2.1 (the tree of a public append-only
// log), and inclusion proofs for one leaf:
//
//	MTH({})    = SHA-256()
//	MTH({d0})  = SHA-256(0x00 ‖ d0)
//	MTH(D[n])  = SHA-256(0x01 ‖ MTH(D[0:k]) ‖ MTH(D[k:n]))
//
// where k is the largest power of two smaller than n. The 0x00 and 0x01
// prefixes keep a leaf from ever hashing like an interior node. The
// package is pure: no I/O, no clock.
package merkle

import (
	"crypto/sha256"
	"errors"
	"fmt"
)

// Hash is one SHA-256 value of the tree.
type Hash = [sha256.Size]byte

// EmptyRoot is the hash of the tree of no leaves: SHA-256 of the empty
// string (RFC 6962 §2.1).
func EmptyRoot() Hash { return sha256.Sum256(nil) }

// LeafHash is SHA-256(0x00 ‖ leaf).
func LeafHash(leaf []byte) Hash {
	h := sha256.New()
	h.Write([]byte{0x00})
	h.Write(leaf)
	var out Hash
	h.Sum(out[:0])
	return out
}

// NodeHash is SHA-256(0x01 ‖ left ‖ right).
func NodeHash(left, right Hash) Hash {
	h := sha256.New()
	h.Write([]byte{0x01})
	h.Write(left[:])
	h.Write(right[:])
	var out Hash
	h.Sum(out[:0])
	return out
}

// split is the largest power of two smaller than n (n > 1).
func split(n int) int {
	k := 1
	for k<<1 < n {
		k <<= 1
	}
	return k
}

// Root is the Merkle tree hash of the leaves, in order.
func Root(leaves [][]byte) Hash {
	hs := make([]Hash, len(leaves))
	for i, l := range leaves {
		hs[i] = LeafHash(l)
	}
	return RootOfHashes(hs)
}

// RootOfHashes is the Merkle tree hash of leaves already hashed with
// LeafHash.
func RootOfHashes(leafHashes []Hash) Hash {
	switch n := len(leafHashes); n {
	case 0:
		return EmptyRoot()
	case 1:
		return leafHashes[0]
	default:
		k := split(n)
		return NodeHash(RootOfHashes(leafHashes[:k]), RootOfHashes(leafHashes[k:]))
	}
}

// ErrIndex is returned for a leaf index outside the tree.
var ErrIndex = errors.New("merkle: leaf index outside the tree")

// InclusionProof is the audit path of leaf index in the tree of the
// leaves (RFC 6962 §2.1.1): the sibling hashes from the leaf up to the
// root, nearest first.
func InclusionProof(leaves [][]byte, index int) ([]Hash, error) {
	if index < 0 || index >= len(leaves) {
		return nil, fmt.Errorf("%w: index %d of %d leaves", ErrIndex, index, len(leaves))
	}
	hs := make([]Hash, len(leaves))
	for i, l := range leaves {
		hs[i] = LeafHash(l)
	}
	return path(index, hs), nil
}

func path(m int, hs []Hash) []Hash {
	n := len(hs)
	if n <= 1 {
		return nil
	}
	k := split(n)
	if m < k {
		return append(path(m, hs[:k]), RootOfHashes(hs[k:]))
	}
	return append(path(m-k, hs[k:]), RootOfHashes(hs[:k]))
}

// VerifyInclusion says whether proof shows that leafHash is leaf index of
// a tree of size leaves whose hash is root (the verification of RFC 9162
// §2.1.3.2, which computes the same tree as RFC 6962).
func VerifyInclusion(leafHash Hash, index, size uint64, proof []Hash, root Hash) bool {
	if index >= size {
		return false
	}
	fn, sn := index, size-1
	r := leafHash
	for _, p := range proof {
		if sn == 0 {
			return false
		}
		if fn&1 == 1 || fn == sn {
			r = NodeHash(p, r)
			for fn&1 == 0 && fn != 0 {
				fn >>= 1
				sn >>= 1
			}
		} else {
			r = NodeHash(r, p)
		}
		fn >>= 1
		sn >>= 1
	}
	return sn == 0 && r == root
}
