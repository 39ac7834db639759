package ledger

import (
	"context"
	"crypto/rand"
	"crypto/sha256"
	"crypto/subtle"
	"encoding/base64"
	"errors"
	"fmt"
	"strings"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"
	"github.com/jackc/pgx/v5/pgxpool"
)

// tokenPrefix starts every API token, so that one found in a file or a
// log is recognisable.
const tokenPrefix = "htk_"

// Token is a personal API token (migration 013). Secret is set only when
// the token is made: it is shown once and never stored.
type Token struct {
	ID        uuid.UUID  `json:"id"`
	Person    string     `json:"person"`
	Note      string     `json:"note,omitempty"`
	CreatedAt time.Time  `json:"created_at"`
	CreatedBy string     `json:"created_by"`
	ExpiresAt time.Time  `json:"expires_at"`
	RevokedAt *time.Time `json:"revoked_at"`
	Secret    string     `json:"token,omitempty"`
}

// ErrBadToken is an API token that is unknown, malformed, revoked,
// expired, or whose person can no longer sign in. The caller says no more
// than that.
var ErrBadToken = errors.New("the token is not valid")

// CreateToken makes a token for a person that expires after days.
func (l *Ledger) CreateToken(ctx context.Context, person string, days int, note string) (*Token, error) {
	if err := l.writable("CreateToken"); err != nil {
		return nil, err
	}
	if days < 1 || days > 366 {
		return nil, inputErr(fmt.Errorf("a token lasts 1 to 366 days, not %d", days))
	}
	b := make([]byte, 32)
	if _, err := rand.Read(b); err != nil {
		return nil, err
	}
	secret := tokenPrefix + base64.RawURLEncoding.EncodeToString(b)
	sum := sha256.Sum256([]byte(secret))
	t := &Token{ID: uuid.New(), Person: person, Note: note, Secret: secret}
	// Through the owner's function (migration 015): it refuses anyone but
	// a person who may sign in, stamps the creator and the times, and
	// bounds the expiry.
	err := l.pool.QueryRow(ctx, `SELECT created_at, created_by, expires_at FROM hulltally_create_token($1, $2, $3, $4, $5)`,
		t.ID, t.Person, sum[:], t.Note, days).Scan(&t.CreatedAt, &t.CreatedBy, &t.ExpiresAt)
	if err != nil {
		return nil, l.NotPermitted(refusedParam(fmt.Errorf("making a token for %s: %w", person, err)))
	}
	return t, nil
}

// Tokens lists the tokens (never their secrets), newest first.
func (l *Ledger) Tokens(ctx context.Context) ([]Token, error) {
	rows, err := l.db.Query(ctx, "SELECT id, person, note, created_at, created_by, expires_at, revoked_at FROM api_tokens ORDER BY created_at DESC, id")
	if err != nil {
		return nil, l.NotPermitted(fmt.Errorf("listing tokens: %w", err))
	}
	return pgx.CollectRows(rows, func(r pgx.CollectableRow) (Token, error) {
		var t Token
		err := r.Scan(&t.ID, &t.Person, &t.Note, &t.CreatedAt, &t.CreatedBy, &t.ExpiresAt, &t.RevokedAt)
		return t, err
	})
}

// RevokeToken revokes a token by its id; revoking twice changes nothing.
func (l *Ledger) RevokeToken(ctx context.Context, id uuid.UUID) error {
	if err := l.writable("RevokeToken"); err != nil {
		return err
	}
	var found bool
	if err := l.pool.QueryRow(ctx, "SELECT hulltally_revoke_token($1)", id).Scan(&found); err != nil {
		return l.NotPermitted(fmt.Errorf("revoking token %s: %w", id, err))
	}
	if !found {
		return inputErr(fmt.Errorf("no token %s (hulltally token list)", id))
	}
	return nil
}

// Authenticate returns the person of a bearer token that is known, not
// revoked, not expired at at, and whose person may still sign in (a login
// role in a hulltally group). Anything else is ErrBadToken.
func (l *Ledger) Authenticate(ctx context.Context, secret string, at time.Time) (string, error) {
	if !strings.HasPrefix(secret, tokenPrefix) || len(secret) > 128 {
		return "", ErrBadToken
	}
	sum := sha256.Sum256([]byte(secret))
	var person string
	var stored []byte
	var ok bool
	err := l.db.QueryRow(ctx, `SELECT t.person, t.token_sha256, t.revoked_at IS NULL AND t.expires_at > $2
			AND EXISTS (SELECT 1 FROM pg_roles u JOIN pg_auth_members m ON m.member = u.oid JOIN pg_roles g ON g.oid = m.roleid
				WHERE u.rolname = t.person AND u.rolcanlogin AND g.rolname = ANY($3))
		FROM api_tokens t WHERE t.token_sha256 = $1`, sum[:], at, groups()).Scan(&person, &stored, &ok)
	if err == pgx.ErrNoRows {
		return "", ErrBadToken
	}
	if err != nil {
		return "", fmt.Errorf("checking a token: %w", err)
	}
	// The lookup was by hash; compare the whole hash again in constant
	// time all the same.
	if subtle.ConstantTimeCompare(stored, sum[:]) != 1 || !ok {
		return "", ErrBadToken
	}
	return person, nil
}

// As opens the same ledger acting as a person: every connection of its
// pool runs SET ROLE to the person, so the database applies the person's
// role and stamps their identity, whatever the caller does. The
// connection's own login (the service's) must be able to SET ROLE to the
// person: the owner of the managed cluster is. Close it after use.
func (l *Ledger) As(ctx context.Context, person string, maxConns int32) (*Ledger, error) {
	pc := l.pool.Config().Copy()
	pc.MaxConns = maxConns
	role := pgx.Identifier{person}.Sanitize()
	pc.AfterConnect = func(ctx context.Context, c *pgx.Conn) error {
		_, err := c.Exec(ctx, "SET ROLE "+role)
		return err
	}
	return l.derived(ctx, pc, func(id Identity) error {
		if id.Name != person || id.Owner {
			return fmt.Errorf("acting as %s: the connection is %s", person, id.Name)
		}
		return nil
	})
}

// derived opens the same ledger on a pool of config pc, as whoever pc
// signs in as; check refuses an identity (the pool is closed then).
func (l *Ledger) derived(ctx context.Context, pc *pgxpool.Config, check func(Identity) error) (*Ledger, error) {
	pool, err := pgxpool.NewWithConfig(ctx, pc)
	if err != nil {
		return nil, err
	}
	s := *l
	s.pool, s.db = pool, pool
	if s.identity, err = readIdentity(ctx, pool); err == nil {
		err = check(s.identity)
	}
	if err != nil {
		pool.Close()
		return nil, err
	}
	return &s, nil
}

// OpenAs opens the same ledger signed in as a person with their own
// password, checked by the server (SCRAM required, as for SignIn): the
// database authenticated them, so what they record carries their name on
// their own sign-in rather than on the caller's SET ROLE. A wrong
// password, the owner or a group is ErrBadPassword. Close it after use.
func (l *Ledger) OpenAs(ctx context.Context, name, password string, maxConns int32) (*Ledger, error) {
	if name == "" || password == "" {
		return nil, ErrBadPassword
	}
	pc := l.pool.Config().Copy()
	pc.MaxConns = maxConns
	pc.ConnConfig.User, pc.ConnConfig.Password = name, password
	pc.ConnConfig.RequireAuth = "scram-sha-256"
	s, err := l.derived(ctx, pc, func(id Identity) error {
		if id.Name != name || id.Owner || id.Role == "" {
			return ErrBadPassword
		}
		return nil
	})
	var pe *pgconn.PgError
	if errors.As(err, &pe) && (pe.Code == "28P01" || pe.Code == "28000") {
		return nil, ErrBadPassword
	}
	return s, err
}

// ErrBadPassword is a sign-in refused: an unknown person, a wrong
// password, or a person who can no longer sign in. The caller says no
// more than that.
var ErrBadPassword = errors.New("the name or the password is not valid")

// SignIn checks a person's password with the database itself (a
// connection as the person, with the server's own authentication: SCRAM
// on the managed cluster) and, when it is right, makes a token for the
// person that lasts a day (a web session; it shows in token list and can
// be revoked). The owner and the group roles cannot sign in this way.
func (l *Ledger) SignIn(ctx context.Context, name, password string) (*Token, error) {
	if name == "" || password == "" || len(name) > 63 || len(password) > 1024 {
		return nil, ErrBadPassword
	}
	cc := l.pool.Config().ConnConfig.Copy()
	cc.User, cc.Password = name, password
	// Only a server that checked the password may answer yes: one that
	// trusts the connection (pg_hba trust or peer) would let any password
	// in, so the connection is refused unless it asks for SCRAM.
	cc.RequireAuth = "scram-sha-256"
	cc.RuntimeParams = map[string]string{"application_name": "hulltally sign-in"}
	c, err := pgx.ConnectConfig(ctx, cc)
	if err != nil {
		var pe *pgconn.PgError
		if errors.As(err, &pe) && (pe.Code == "28P01" || pe.Code == "28000") {
			return nil, ErrBadPassword
		}
		return nil, fmt.Errorf("checking a sign-in: %w", err)
	}
	id, err := readIdentity(ctx, c)
	c.Close(context.WithoutCancel(ctx))
	if err != nil {
		return nil, fmt.Errorf("checking a sign-in: %w", err)
	}
	if id.Owner || id.Role == "" {
		return nil, ErrBadPassword
	}
	return l.CreateToken(ctx, id.Name, 1, "web session")
}

// RevokeSecret revokes the token with this secret (a web session's
// sign-out); an unknown secret is ErrBadToken.
func (l *Ledger) RevokeSecret(ctx context.Context, secret string) error {
	sum := sha256.Sum256([]byte(secret))
	var id uuid.UUID
	if err := l.db.QueryRow(ctx, "SELECT id FROM api_tokens WHERE token_sha256 = $1", sum[:]).Scan(&id); err != nil {
		if errors.Is(err, pgx.ErrNoRows) {
			return ErrBadToken
		}
		return fmt.Errorf("finding a token: %w", err)
	}
	return l.RevokeToken(ctx, id)
}
