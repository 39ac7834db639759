package main

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"

	"hulltally/ledger"
	"hulltally/reports/web/client"
)

// clientCommands are the commands that work against the service when
// server.url is set.
const clientCommands = "dive log, clear, fleet and report verify"

// remote is the service's client when server.url is set (the command then
// works against the service as the token's person), nil when it is not.
func (a *app) remote() (*client.Client, error) {
	if a.cfg == nil || a.cfg.Server.URL == "" {
		return nil, nil
	}
	c, err := client.New(a.cfg.Server.URL, a.cfg.Server.Token, nil)
	if err != nil {
		return nil, &ledger.InputError{Err: err}
	}
	return c, nil
}

// errDatabaseOnly refuses a command that works only against the database
// while server.url is set: it would otherwise open (or create) a database
// of its own and answer from a ledger that is not the service's.
func (a *app) errDatabaseOnly(what string) error {
	return &ledger.InputError{Err: fmt.Errorf("%s works against the database only, and server.url is set (%s): the commands that work against the service are %s; unset server.url (HULLTALLY_SERVER_URL) to use the database",
		what, redact(a.cfg.Server.URL), clientCommands)}
}

// printRaw prints the service's JSON answer as printJSON prints the same
// value (two-space indent, one newline).
func (a *app) printRaw(raw []byte) error {
	var b bytes.Buffer
	if err := json.Indent(&b, raw, "", "  "); err != nil {
		return fmt.Errorf("the service's answer: %w", err)
	}
	b.WriteByte('\n')
	_, err := a.out.Write(b.Bytes())
	return err
}

// serviceKind is the error kind of the service's refusal, in the command
// line's terms, and whether it was one.
func serviceKind(err error) (string, bool) {
	var ce *client.Error
	if !errors.As(err, &ce) {
		return "", false
	}
	switch ce.Kind {
	case kindInput, kindNotPermitted, kindFailure, kindUnauthenticated:
		return ce.Kind, true
	}
	return kindFailure, true
}
