package ledger

import (
	"context"
	"crypto/rand"
	"encoding/base64"
	"errors"
	"fmt"
	"regexp"
	"slices"
	"strings"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"

	"hulltally/internal/scram"
)

// Role is what a person may do (migration 012): each is a PostgreSQL
// group role, and the database enforces it.
type Role string

// The roles.
const (
	RoleInspector   Role = "inspector"   // read and verify
	RoleOperator    Role = "operator"    // log dives, correct a dive's site or operator, read
	RoleMaintenance Role = "maintenance" // also hulls, inspections, proof tests, decisions, voids, assessments, reports
	RoleAdmin       Role = "admin"       // people
)

// Roles lists the roles, least first.
var Roles = []Role{RoleInspector, RoleOperator, RoleMaintenance, RoleAdmin}

// group is the role's PostgreSQL group role.
func (r Role) group() string { return "hulltally_" + string(r) }

// ParseRole reads a role name.
func ParseRole(s string) (Role, error) {
	r := Role(strings.ToLower(strings.TrimSpace(s)))
	if slices.Contains(Roles, r) {
		return r, nil
	}
	return "", inputErr(fmt.Errorf("role %q: one of inspector, operator, maintenance, admin", s))
}

// Identity is who the ledger's connection is: a person (a login role in
// one of the groups), or the owner of the ledger's tables (who runs the
// migrations; on the managed local cluster, the local user), who may do
// everything. Either way, records carry Name (actorFor).
type Identity struct {
	// Name is the database identity (current_user).
	Name string `json:"name"`
	// Owner is true for the owner of the ledger's tables.
	Owner bool `json:"owner"`
	// Role is the person's role; empty for the owner.
	Role Role `json:"role,omitempty"`
}

// Identity returns who the ledger's connection is.
func (l *Ledger) Identity() Identity { return l.identity }

// readIdentity asks the database who the connection is.
func readIdentity(ctx context.Context, q querier) (Identity, error) {
	var id Identity
	var groups []string
	err := q.QueryRow(ctx, `SELECT current_user::text,
		pg_has_role(current_user, (SELECT relowner FROM pg_class WHERE oid = 'public.hulls'::regclass), 'USAGE'),
		coalesce(array_agg(g.rolname::text ORDER BY g.rolname) FILTER (WHERE g.rolname IS NOT NULL), '{}')
		FROM pg_roles u LEFT JOIN pg_auth_members m ON m.member = u.oid LEFT JOIN pg_roles g ON g.oid = m.roleid AND g.rolname LIKE 'hulltally\_%'
		WHERE u.rolname = current_user`).Scan(&id.Name, &id.Owner, &groups)
	if err != nil {
		return id, fmt.Errorf("reading who this connection is: %w", err)
	}
	if !id.Owner {
		// The strongest group the person is in.
		for _, r := range Roles {
			if slices.Contains(groups, r.group()) {
				id.Role = r
			}
		}
	}
	return id, nil
}

// actorFor is the actor of a record the connection makes: always the
// identity the database authenticated (the person signed in, or the
// owner's own login); a different name given is refused, and the
// database refuses it too (migration 018). An actor is never free text.
func (l *Ledger) actorFor(given string) (string, error) {
	if g := strings.TrimSpace(given); g != "" && g != l.identity.Name {
		return "", inputErr(fmt.Errorf("signed in as %s: a record cannot name %q as its actor (records carry the identity of who is signed in; leave --actor out)", l.identity.Name, g))
	}
	return l.identity.Name, nil
}

// NotPermittedError is a write the database refused to the person signed
// in: nothing of it was stored.
type NotPermittedError struct {
	Identity Identity
	Err      error
}

func (e *NotPermittedError) Error() string {
	who := e.Identity.Name
	if e.Identity.Role != "" {
		who += " (" + string(e.Identity.Role) + ")"
	}
	return fmt.Sprintf("not permitted: %s may not do this: %v; nothing was stored", who, e.Err)
}

func (e *NotPermittedError) Unwrap() error { return e.Err }

// IsNotPermitted says whether err is a refusal of the person: the
// database's refusal of a privilege (SQLSTATE 42501), or a
// NotPermittedError (the service's own refusal of a form the role may not
// use, in front of the database's).
func IsNotPermitted(err error) bool {
	var pe *pgconn.PgError
	var np *NotPermittedError
	return errors.As(err, &np) || (errors.As(err, &pe) && pe.Code == "42501")
}

// NotPermitted turns the database's refusal of a privilege (SQLSTATE
// 42501) into a NotPermittedError naming who is signed in; other errors
// are returned as they are.
func (l *Ledger) NotPermitted(err error) error {
	if !IsNotPermitted(err) {
		return err
	}
	var already *NotPermittedError
	if errors.As(err, &already) {
		return err
	}
	return &NotPermittedError{Identity: l.identity, Err: err}
}

// Person is a person who may sign in to the ledger.
type Person struct {
	Name     string `json:"name"`
	Role     Role   `json:"role"`
	Disabled bool   `json:"disabled"`
	// Password is the generated password, shown once when the person is
	// added without one; empty otherwise.
	Password string `json:"password,omitempty"`
}

// personName is what a person's name may be: a login role's name that
// needs no quoting and cannot be taken for a group or system role.
var personName = regexp.MustCompile(`^[a-z][a-z0-9._-]{1,62}$`)

// AddPerson makes a person a login role in the role's group, with the
// password given or, when it is empty, a generated one (returned once,
// never stored). The password is sent as a SCRAM-SHA-256 verifier made
// here, so it never reaches the server or its log in clear.
func (l *Ledger) AddPerson(ctx context.Context, name string, role Role, password string) (*Person, error) {
	if err := l.writable("AddPerson"); err != nil {
		return nil, err
	}
	if !personName.MatchString(name) || strings.HasPrefix(name, "hulltally") || strings.HasPrefix(name, "pg_") {
		return nil, inputErr(fmt.Errorf("person %q: a name is 2 to 63 characters, lower-case letters, digits, '.', '_' or '-', starting with a letter (not hulltally… or pg_…)", name))
	}
	if _, err := ParseRole(string(role)); err != nil {
		return nil, err
	}
	p := &Person{Name: name, Role: role}
	if password == "" {
		b := make([]byte, 18)
		if _, err := rand.Read(b); err != nil {
			return nil, err
		}
		password = base64.RawURLEncoding.EncodeToString(b)
		p.Password = password
	} else if len(password) < 12 {
		return nil, inputErr(errors.New("a password has at least 12 characters"))
	}
	verifier, err := scram.Verifier(password)
	if errors.Is(err, scram.ErrNotASCII) {
		return nil, inputErr(err)
	}
	if err != nil {
		return nil, err
	}
	// Through the owner's function (migration 014): people never hold
	// CREATEROLE, and the function makes nothing but a login role in one
	// of the groups.
	if _, err := l.pool.Exec(ctx, "SELECT hulltally_add_person($1, $2, $3)", name, role.group(), verifier); err != nil {
		var pe *pgconn.PgError
		switch {
		case errors.As(err, &pe) && pe.Code == "42710":
			return nil, inputErr(fmt.Errorf("person %s: the name is taken on this database server", name))
		}
		return nil, l.NotPermitted(refusedParam(fmt.Errorf("adding person %s: %w", name, err)))
	}
	return p, nil
}

// People lists the people of every group, by name.
func (l *Ledger) People(ctx context.Context) ([]Person, error) {
	rows, err := l.db.Query(ctx, `SELECT u.rolname::text, g.rolname::text, NOT u.rolcanlogin
		FROM pg_roles u JOIN pg_auth_members m ON m.member = u.oid JOIN pg_roles g ON g.oid = m.roleid
		WHERE g.rolname = ANY($1) ORDER BY u.rolname COLLATE "C", g.rolname`, groups())
	if err != nil {
		return nil, fmt.Errorf("listing people: %w", err)
	}
	all, err := pgx.CollectRows(rows, func(r pgx.CollectableRow) (Person, error) {
		var p Person
		var g string
		err := r.Scan(&p.Name, &g, &p.Disabled)
		p.Role = Role(strings.TrimPrefix(g, "hulltally_"))
		return p, err
	})
	if err != nil {
		return nil, fmt.Errorf("listing people: %w", err)
	}
	// One line a person: the strongest group.
	out := []Person{}
	for _, p := range all {
		if n := len(out); n > 0 && out[n-1].Name == p.Name {
			if slices.Index(Roles, p.Role) > slices.Index(Roles, out[n-1].Role) {
				out[n-1].Role = p.Role
			}
			continue
		}
		out = append(out, p)
	}
	return out, nil
}

// DisablePerson stops a person signing in (NOLOGIN) and ends their open
// sessions; their records stay, with their name.
func (l *Ledger) DisablePerson(ctx context.Context, name string) error {
	if err := l.writable("DisablePerson"); err != nil {
		return err
	}
	// Through the owner's function (migration 014): it refuses anyone but
	// a person, and makes NOLOGIN and the end of their sessions both or
	// neither.
	if _, err := l.pool.Exec(ctx, "SELECT hulltally_disable_person($1)", name); err != nil {
		return l.NotPermitted(refusedParam(fmt.Errorf("disabling person %s: %w", name, err)))
	}
	return nil
}

// refusedParam turns the people and token functions' refusal of a value
// (SQLSTATE 22023, invalid_parameter_value: no such person, a bad name, a
// bad expiry) into an InputError with the function's message; other
// errors are returned as they are.
func refusedParam(err error) error {
	var pe *pgconn.PgError
	if errors.As(err, &pe) && pe.Code == "22023" {
		return inputErr(fmt.Errorf("%s (hulltally person list)", pe.Message))
	}
	return err
}

func groups() []string {
	out := make([]string, len(Roles))
	for i, r := range Roles {
		out[i] = r.group()
	}
	return out
}
