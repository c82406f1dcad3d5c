"""Database triggers that make the ledger append-only whatever client writes to it.

Installed by migration ``chain.0002``. PostgreSQL triggers are set ``ENABLE ALWAYS`` so that
``SET session_replication_role = replica`` does not skip them; TRUNCATE needs its own
statement-level trigger because row triggers do not fire for it. SQLite has neither TRUNCATE nor
replication roles, so UPDATE and DELETE triggers suffice there.

On top of refusing change, the INSERT trigger refuses any entry that does not extend the current
tip (sequence number one above it, ``prev_hash`` equal to its hash), so neither a gap nor a fork
can be written, even by a client that bypasses ``entry_append``.
"""

GENESIS = "0" * 64

# Tables whose rows are never changed or removed once written.
APPEND_ONLY_TABLES = ("chain_entry", "chain_merklenode")

# Each function pins its search_path to the ledger's schema with pg_temp last: otherwise a
# temporary table named chain_entry (which any role with TEMP may create) would be searched first
# and could stand in for the real tip in the checks below.
POSTGRES_FUNCTIONS = [
    """
    CREATE OR REPLACE FUNCTION forebook_refuse_change() RETURNS trigger
    LANGUAGE plpgsql SET search_path = pg_catalog, {schema}, pg_temp AS $$
    BEGIN
        RAISE EXCEPTION 'forebook ledger: % on % is refused: ledger rows are append-only',
            TG_OP, TG_TABLE_NAME
            USING HINT = 'Record a new entry (an amendment, a correction) instead of changing an old one.';
    END $$
    """,
    f"""
    CREATE OR REPLACE FUNCTION forebook_entry_extends_tip() RETURNS trigger
    LANGUAGE plpgsql SET search_path = pg_catalog, {{schema}}, pg_temp AS $$
    DECLARE
        tip_hash text;
    BEGIN
        IF NEW.seq = 1 THEN
            tip_hash := '{GENESIS}';
        ELSE
            SELECT entry_hash INTO tip_hash FROM chain_entry WHERE seq = NEW.seq - 1;
        END IF;
        IF tip_hash IS NULL OR tip_hash <> NEW.prev_hash THEN
            RAISE EXCEPTION 'forebook ledger: entry % does not extend the chain (no entry % with hash %)',
                NEW.seq, NEW.seq - 1, NEW.prev_hash;
        END IF;
        RETURN NEW;
    END $$
    """,
    f"""
    CREATE OR REPLACE FUNCTION forebook_head_matches_tip() RETURNS trigger
    LANGUAGE plpgsql SET search_path = pg_catalog, {{schema}}, pg_temp AS $$
    DECLARE
        tip_hash text;
    BEGIN
        IF TG_OP = 'DELETE' THEN
            RAISE EXCEPTION 'forebook ledger: the chain head cannot be deleted';
        END IF;
        -- A second head row is refused by the primary key (or skipped by ON CONFLICT DO NOTHING
        -- when two first writers race); there is nothing to check for it here.
        IF TG_OP = 'INSERT' AND EXISTS (SELECT 1 FROM chain_chainhead WHERE id = NEW.id) THEN
            RETURN NEW;
        END IF;
        IF NEW.size = 0 THEN
            tip_hash := '{GENESIS}';
        ELSE
            SELECT entry_hash INTO tip_hash FROM chain_entry WHERE seq = NEW.size;
        END IF;
        IF (TG_OP = 'UPDATE' AND NEW.size < OLD.size)
           OR tip_hash IS NULL OR tip_hash <> NEW.head_hash
           OR EXISTS (SELECT 1 FROM chain_entry WHERE seq = NEW.size + 1) THEN
            RAISE EXCEPTION 'forebook ledger: the chain head must point at the last entry';
        END IF;
        RETURN NEW;
    END $$
    """,
]

POSTGRES_TRIGGERS = {
    # name: (table, timing and event, level, function)
    "chain_entry_refuse_change": ("chain_entry", "BEFORE UPDATE OR DELETE", "ROW", "forebook_refuse_change"),
    "chain_entry_refuse_truncate": ("chain_entry", "BEFORE TRUNCATE", "STATEMENT", "forebook_refuse_change"),
    "chain_entry_extends_tip": ("chain_entry", "BEFORE INSERT", "ROW", "forebook_entry_extends_tip"),
    "chain_merklenode_refuse_change": ("chain_merklenode", "BEFORE UPDATE OR DELETE", "ROW", "forebook_refuse_change"),
    "chain_merklenode_refuse_truncate": ("chain_merklenode", "BEFORE TRUNCATE", "STATEMENT", "forebook_refuse_change"),
    "chain_chainhead_matches_tip": (
        "chain_chainhead",
        "BEFORE INSERT OR UPDATE OR DELETE",
        "ROW",
        "forebook_head_matches_tip",
    ),
    "chain_chainhead_refuse_truncate": ("chain_chainhead", "BEFORE TRUNCATE", "STATEMENT", "forebook_refuse_change"),
}

SQLITE_TRIGGERS = {
    "chain_entry_refuse_update": (
        "BEFORE UPDATE ON chain_entry",
        "SELECT RAISE(ABORT, 'forebook ledger: UPDATE on chain_entry is refused: ledger rows are append-only')",
        None,
    ),
    "chain_entry_refuse_delete": (
        "BEFORE DELETE ON chain_entry",
        "SELECT RAISE(ABORT, 'forebook ledger: DELETE on chain_entry is refused: ledger rows are append-only')",
        None,
    ),
    "chain_entry_extends_tip": (
        "BEFORE INSERT ON chain_entry",
        "SELECT RAISE(ABORT, 'forebook ledger: the new entry does not extend the chain tip')",
        f"NOT ((NEW.seq = 1 AND NEW.prev_hash = '{GENESIS}') OR EXISTS "
        "(SELECT 1 FROM chain_entry WHERE seq = NEW.seq - 1 AND entry_hash = NEW.prev_hash))",
    ),
    "chain_merklenode_refuse_update": (
        "BEFORE UPDATE ON chain_merklenode",
        "SELECT RAISE(ABORT, 'forebook ledger: UPDATE on chain_merklenode is refused: ledger rows are append-only')",
        None,
    ),
    "chain_merklenode_refuse_delete": (
        "BEFORE DELETE ON chain_merklenode",
        "SELECT RAISE(ABORT, 'forebook ledger: DELETE on chain_merklenode is refused: ledger rows are append-only')",
        None,
    ),
    "chain_chainhead_refuse_delete": (
        "BEFORE DELETE ON chain_chainhead",
        "SELECT RAISE(ABORT, 'forebook ledger: the chain head cannot be deleted')",
        None,
    ),
    "chain_chainhead_matches_tip": (
        "BEFORE UPDATE ON chain_chainhead",
        "SELECT RAISE(ABORT, 'forebook ledger: the chain head must point at the last entry')",
        f"NEW.size < OLD.size OR NOT ((NEW.size = 0 AND NEW.head_hash = '{GENESIS}') OR EXISTS "
        "(SELECT 1 FROM chain_entry WHERE seq = NEW.size AND entry_hash = NEW.head_hash)) "
        "OR EXISTS (SELECT 1 FROM chain_entry WHERE seq = NEW.size + 1)",
    ),
}


def install_statements(vendor: str, *, schema: str = "public") -> list[str]:
    """Idempotent SQL that (re)creates every ledger trigger on this database vendor.

    ``schema`` is the PostgreSQL schema holding the ledger tables (see ``ledger_schema``).
    """
    if vendor == "postgresql":
        if not schema.replace("_", "").isalnum():
            raise ValueError(f"Unexpected schema name {schema!r}; ledger tables must live in a plainly named schema.")
        statements = [sql.replace("{schema}", schema).strip() for sql in POSTGRES_FUNCTIONS]
        for name, (table, event, level, function) in POSTGRES_TRIGGERS.items():
            statements += [
                f"DROP TRIGGER IF EXISTS {name} ON {table}",
                f"CREATE TRIGGER {name} {event} ON {table} FOR EACH {level} EXECUTE FUNCTION {function}()",
                f"ALTER TABLE {table} ENABLE ALWAYS TRIGGER {name}",
            ]
        return statements
    if vendor == "sqlite":
        statements = []
        for name, (event, body, condition) in SQLITE_TRIGGERS.items():
            when = f" WHEN {condition}" if condition else ""
            statements += [
                f"DROP TRIGGER IF EXISTS {name}",
                f"CREATE TRIGGER {name} {event}{when} BEGIN {body}; END",
            ]
        return statements
    raise NotImplementedError(
        f"Forebook's ledger triggers exist for PostgreSQL and SQLite, not {vendor!r}; use one of those databases."
    )


def drop_statements(vendor: str) -> list[str]:
    if vendor == "postgresql":
        return [f"DROP TRIGGER IF EXISTS {name} ON {table}" for name, (table, *_rest) in POSTGRES_TRIGGERS.items()]
    if vendor == "sqlite":
        return [f"DROP TRIGGER IF EXISTS {name}" for name in SQLITE_TRIGGERS]
    raise NotImplementedError(f"No ledger triggers for {vendor!r}.")


def ledger_schema(connection) -> str:
    """The schema the ledger tables were created in (PostgreSQL); SQLite has only "main"."""
    if connection.vendor != "postgresql":
        return "main"
    with connection.cursor() as cursor:
        cursor.execute("SELECT current_schema()")
        return cursor.fetchone()[0]
