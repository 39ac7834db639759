// Package migrations embeds hulltally's numbered SQL migrations. They are
// applied in order by ledger.Migrate (jackc/tern), under tern's advisory
// lock, so two processes starting at once do not race.
package migrations

import "embed"

// FS holds the migration files, named NNN_description.sql.
//
//go:embed *.sql
var FS embed.FS
