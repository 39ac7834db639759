// Package inforce decides which assessment is in force for each dive of
// a hull. Assessments are append-only: a dive logged later adds an
// assessment of that dive, a re-assessment adds one of every dive, and
// none is ever changed. A dive takes its damage from the newest
// assessment that covers it; older assessments of the same dive stay on
// record but no longer count.
//
// The package is pure: it sees dive identifiers and per-component damage
// arrays, nothing of where they are stored.
package inforce

import "hulltally/fatigue/damage"

// Column is one component's damage in one assessment: the damage of
// each assessed dive, in parallel slices (Dives[n] has Cyclic[n] and
// Sustained[n]).
type Column[ID comparable] struct {
	Component string
	Dives     []ID
	Cyclic    []float64
	Sustained []float64
}

// Claimer hands each dive to the newest assessment that covers it. Feed
// it the assessments newest first, one Claim each; it keeps only one
// flag and one damage map per dive, so assessments can be streamed.
type Claimer[ID comparable] struct {
	pos     map[ID]int
	comps   map[string]bool
	claimed []bool
	damage  []map[string]damage.Damage
	from    []int
	n       int
}

// New returns a Claimer for the dives (positions in this slice are the
// positions of Damage and From) and the components the hull's spec has
// now; columns of any other component are ignored.
func New[ID comparable](dives []ID, components []string) *Claimer[ID] {
	c := &Claimer[ID]{pos: make(map[ID]int, len(dives)), comps: map[string]bool{}, claimed: make([]bool, len(dives)),
		damage: make([]map[string]damage.Damage, len(dives)), from: make([]int, len(dives))}
	for p, d := range dives {
		c.pos[d] = p
		c.damage[p] = map[string]damage.Damage{}
		c.from[p] = -1
	}
	for _, name := range components {
		c.comps[name] = true
	}
	return c
}

// Claim takes the next assessment (the newest not yet given) as its
// columns. Every dive it covers (in any column) that no newer assessment
// covered is claimed by it: that dive's damage is this assessment's, for
// each component the assessment has a column of. Dives not among the
// Claimer's dives (void dives, for one) are ignored. Claim reports, for
// each column, whether it gave at least one dive its damage.
func (c *Claimer[ID]) Claim(cols []Column[ID]) []bool {
	idx := c.n
	c.n++
	fresh := map[int]bool{}
	for _, col := range cols {
		for _, d := range col.Dives {
			if p, ok := c.pos[d]; ok && !c.claimed[p] {
				fresh[p] = true
			}
		}
	}
	used := make([]bool, len(cols))
	for k, col := range cols {
		if !c.comps[col.Component] {
			continue // a component no longer in the spec
		}
		for n, d := range col.Dives {
			if p, ok := c.pos[d]; ok && fresh[p] {
				c.damage[p][col.Component] = damage.Damage{Cyclic: col.Cyclic[n], Sustained: col.Sustained[n]}
				used[k] = true
			}
		}
	}
	for p := range fresh {
		c.claimed[p] = true
		c.from[p] = idx
	}
	return used
}

// Damage returns each dive's damage by component, from the assessment in
// force for it (an empty map for a dive no assessment covers).
func (c *Claimer[ID]) Damage() []map[string]damage.Damage { return c.damage }

// From returns, for each dive, the position (in the order given to
// Claim, 0 = newest) of the assessment in force for it; -1 when none
// covers the dive.
func (c *Claimer[ID]) From() []int { return c.from }

// InForce is the whole decision at once: given the dives, the
// components and the assessments newest first, it returns each dive's
// damage by component and which columns of each assessment count.
func InForce[ID comparable](dives []ID, components []string, newestFirst [][]Column[ID]) (perDive []map[string]damage.Damage, used [][]bool) {
	c := New(dives, components)
	used = make([][]bool, len(newestFirst))
	for i, a := range newestFirst {
		used[i] = c.Claim(a)
	}
	return c.Damage(), used
}
