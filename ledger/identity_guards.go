package ledger

import (
	"context"
	"fmt"
	"regexp"
	"slices"

	"github.com/jackc/pgx/v5"

	"hulltally/migrations"
)

// The identity guards: the triggers that make every record carry the
// identity the database signed in (migrations 012, 016, 018). verify and
// Migrate watch and restore them as they do the append-only guards, so
// that an owner who switches one off to record a typed name is found.

// identityMigration is the migration that defines the identity functions
// as they stand; their bodies are read from it, so the two cannot drift.
const identityMigration = "018_owner_actor_is_identity.sql"

// identitySearchPath is the search_path every identity function is
// pinned to.
const identitySearchPath = "search_path=pg_catalog, pg_temp"

// actorTables carry an actor column and the <table>_actor_is_identity
// trigger (migration 012).
var actorTables = [...]string{"hull_revisions", "corrections", "assessments", "inspections", "proof_tests", "decisions", "dive_voids"}

// identityTrigger is one identity guard: a BEFORE INSERT row trigger.
type identityTrigger struct{ table, name, fn string }

// identityTriggers lists the identity guards.
func identityTriggers() []identityTrigger {
	out := make([]identityTrigger, 0, len(actorTables)+1)
	for _, t := range actorTables {
		out = append(out, identityTrigger{t, t + "_actor_is_identity", "ledger_actor_is_identity"})
	}
	return append(out, identityTrigger{"dives", "dives_recorded_by", "ledger_dive_recorded_by"})
}

// guardInsertType is a BEFORE INSERT FOR EACH ROW trigger's tgtype.
const guardInsertType = 1 | 2 | 4

var identityFunctionRE = regexp.MustCompile(`(?s)CREATE OR REPLACE FUNCTION (\w+)\(\) RETURNS trigger LANGUAGE plpgsql\s+SET search_path = pg_catalog, pg_temp AS \$\$(.*?)\$\$;`)

// identityBodies returns the body of each identity function as the
// migration defines it.
func identityBodies() (map[string]string, error) {
	sql, err := migrations.FS.ReadFile(identityMigration)
	if err != nil {
		return nil, fmt.Errorf("reading migration %s: %w", identityMigration, err)
	}
	out := map[string]string{}
	for _, m := range identityFunctionRE.FindAllStringSubmatch(string(sql), -1) {
		out[m[1]] = m[2]
	}
	for _, fn := range []string{"ledger_actor_is_identity", "ledger_dive_recorded_by"} {
		if out[fn] == "" {
			return nil, fmt.Errorf("migration %s defines no function %s", identityMigration, fn)
		}
	}
	return out, nil
}

// checkIdentityGuards lists the identity guards that are missing,
// disabled or altered: each function first, then each trigger, judged on
// checkGuards' reads of the triggers and of the tables that exist. Tables
// that do not exist are left to the append-only check, which reports
// them.
func checkIdentityGuards(ctx context.Context, q querier, trigs map[string]triggerState, tables map[string]bool) ([]GuardFinding, error) {
	bodies, err := identityBodies()
	if err != nil {
		return nil, err
	}
	var out []GuardFinding
	for _, fn := range []string{"ledger_actor_is_identity", "ledger_dive_recorded_by"} {
		var src *string
		var config []string
		err := q.QueryRow(ctx, `SELECT p.prosrc, coalesce(p.proconfig, '{}') FROM pg_proc p JOIN pg_namespace n ON n.oid = p.pronamespace
			WHERE n.nspname = current_schema() AND p.proname = $1 AND p.pronargs = 0`, fn).Scan(&src, &config)
		switch {
		case err == pgx.ErrNoRows:
			out = append(out, GuardFinding{Guard: GuardIdentity, Trigger: fn, Problem: GuardMissing,
				Detail: fmt.Sprintf("the identity function %s is missing: records may carry a name nobody signed in as", fn)})
		case err != nil:
			return nil, fmt.Errorf("verify: reading the identity function %s: %w", fn, err)
		case foldSpace(*src) != foldSpace(bodies[fn]) || !slices.Equal(config, []string{identitySearchPath}):
			out = append(out, GuardFinding{Guard: GuardIdentity, Trigger: fn, Problem: GuardAltered,
				Detail: fmt.Sprintf("the identity function %s was replaced: records may carry a name nobody signed in as", fn)})
		}
	}
	for _, want := range identityTriggers() {
		if !tables[want.table] {
			continue
		}
		if g := judgeTrigger(GuardIdentity, want.table, want.name, trigs, guardInsertType, want.fn, "its records may carry a name nobody signed in as"); g != nil {
			out = append(out, *g)
		}
	}
	return out, nil
}

// identityRepair returns the statements that put an identity guard back
// as the migrations make it; ok is false for a finding that is not one.
func identityRepair(g GuardFinding, bodies map[string]string) (stmts []string, ok bool) {
	if g.Table == "" {
		body, ok := bodies[g.Trigger]
		if !ok {
			return nil, false
		}
		return []string{"CREATE OR REPLACE FUNCTION " + pgx.Identifier{g.Trigger}.Sanitize() +
			"() RETURNS trigger LANGUAGE plpgsql SET search_path = pg_catalog, pg_temp AS $hulltally$" + body + "$hulltally$"}, true
	}
	i := slices.IndexFunc(identityTriggers(), func(t identityTrigger) bool { return t.table == g.Table && t.name == g.Trigger })
	if i < 0 {
		return nil, false
	}
	want := identityTriggers()[i]
	table, trig := pgx.Identifier{want.table}.Sanitize(), pgx.Identifier{want.name}.Sanitize()
	create := "CREATE TRIGGER " + trig + " BEFORE INSERT ON " + table + " FOR EACH ROW EXECUTE FUNCTION " + want.fn + "()"
	switch g.Problem {
	case GuardMissing:
		return []string{create}, true
	case GuardAltered:
		return []string{"DROP TRIGGER " + trig + " ON " + table, create}, true
	default: // GuardDisabled
		return []string{"ALTER TABLE " + table + " ENABLE TRIGGER " + trig}, true
	}
}
