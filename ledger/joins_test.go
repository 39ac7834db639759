package ledger_test

import (
	"go/ast"
	"go/parser"
	"go/token"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"
)

// idPair finds a predicate that pairs a child's reference to a dive or an
// assessment, or a chain link's record key, with that record's id
// (c.dive_id = d.id, c.record_key = a.id::text, or the reverse).
var idPair = regexp.MustCompile(`\b(\w+)\.(?:dive_id|assessment_id|record_key)\s*=\s*(\w+)\.id\b|\b(\w+)\.id\s*=\s*(\w+)\.(?:dive_id|assessment_id|record_key)\b`)

// TestJoinsStateTheHull reads every SQL string of the ledger package (the
// only door to PostgreSQL) and checks that each predicate pairing a row
// with a dive or an assessment by id also states that both rows belong to
// one hull (x.hull_id = y.hull_id): the keys already guarantee it (every
// foreign key includes hull_id), but a scale-out that distributes the
// tables by hull runs a statement as a co-located join, on each node
// alone, only when the distribution column is in the join condition.
// Joins with hulls are by hulls.id = x.hull_id, which is that column.
// (Without it the chain's look-up of an assessment's link by record key
// alone could not use the chain's key, (hull_id, kind, record_key), after
// migration 8, and scanned the chain for every assessment: 24 ms a hull
// in a 250-hull fleet, found by hulltally-fleetbench.)
func TestJoinsStateTheHull(t *testing.T) {
	files, err := filepath.Glob("*.go")
	if err != nil {
		t.Fatal(err)
	}
	fset := token.NewFileSet()
	checked := 0
	for _, f := range files {
		if strings.HasSuffix(f, "_test.go") {
			continue
		}
		af, err := parser.ParseFile(fset, f, nil, 0)
		if err != nil {
			t.Fatal(err)
		}
		ast.Inspect(af, func(n ast.Node) bool {
			lit, ok := n.(*ast.BasicLit)
			if !ok || lit.Kind != token.STRING {
				return true
			}
			sql, err := strconv.Unquote(lit.Value)
			if err != nil {
				return true
			}
			for _, m := range idPair.FindAllStringSubmatch(sql, -1) {
				a, b := m[1], m[2]
				if a == "" {
					a, b = m[3], m[4]
				}
				checked++
				same := regexp.MustCompile(`\b` + a + `\.hull_id\s*=\s*` + b + `\.hull_id\b|\b` + b + `\.hull_id\s*=\s*` + a + `\.hull_id\b`)
				if !same.MatchString(sql) {
					t.Errorf("%s: %q pairs %s with %s by id without %s.hull_id = %s.hull_id:\n%s", fset.Position(lit.Pos()), strings.TrimSpace(m[0]), a, b, a, b, sql)
				}
			}
			return true
		})
	}
	if checked < 10 {
		t.Fatalf("only %d id joins found: the scan is not reading the queries", checked)
	}
	t.Logf("%d id joins checked", checked)
}
