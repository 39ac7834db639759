-- Signed checkpoints: a statement of every hull's chain head and length,
-- with a Merkle root over the hulls, signed by the operator's key (the
-- report-signing ECDSA P-256 key, public key as PKIX DER, signature ASN.1;
-- or an Ed25519 key, 32-byte public key, 64-byte signature).
-- A copy kept outside the database (the checkpoint log file) lets a later
-- `verify --checkpoint` find a chain that was truncated, removed, or
-- rewritten with its hashes recomputed before the checkpoint.
--
-- The table stands outside the hull chains (making a checkpoint does not
-- change what it states) and is chained itself: each row carries the hash
-- of the previous checkpoint (32 zero bytes for the first), which is also
-- inside its signed statement; hash = SHA-256(statement). Append-only.
CREATE TABLE checkpoints (
    id          bigint PRIMARY KEY CHECK (id >= 1),
    statement   text NOT NULL,
    root        bytea NOT NULL CHECK (length(root) = 32),
    prev_hash   bytea NOT NULL CHECK (length(prev_hash) = 32),
    hash        bytea NOT NULL UNIQUE CHECK (length(hash) = 32),
    signature   bytea NOT NULL CHECK (length(signature) BETWEEN 64 AND 80),
    public_key  bytea NOT NULL CHECK (length(public_key) BETWEEN 32 AND 128),
    recorded_at timestamptz NOT NULL
);

SELECT ledger_protect(ARRAY['checkpoints']);
