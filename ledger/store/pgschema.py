"""The database layout of a PostgreSQL ledger, as SQL, with its version and migration steps.

Everything lives in one schema, ``propledger``: ``crafts`` (one row per craft: its definition record,
the chain's first link), ``entries`` (the records, one chain per craft) and ``versions`` (the layout
versions applied, newest last). The rules are kept by the server, not by the program:
- ``entries`` and ``crafts`` refuse UPDATE, DELETE and TRUNCATE (a trigger; grants should also give the
  program's role only SELECT and INSERT, docs/postgresql.md);
- an entry is accepted only as the next link of its craft's chain: ``(craft, seq)`` is the primary key
  and the insert trigger checks that ``prev`` is the hash of entry ``seq - 1`` (or of the craft link);
- ``db_user`` is set to ``session_user`` by the server, and the record's ``by`` must equal it (except
  for a craft copied in from a file ledger: its craft link and its entries up to
  ``crafts.imported_through`` keep the names the file recorded; ``db_user`` still says who copied them);
- a committed insert sends ``NOTIFY propledger, '<craft> <last seq>'`` for the consoles.
"""
from __future__ import annotations

SCHEMA_NAME = "propledger"
VERSION = 1
CHANNEL = "propledger"

CREATE = r"""
CREATE SCHEMA propledger;

CREATE TABLE propledger.versions (
    version    integer     NOT NULL PRIMARY KEY,
    applied_at timestamptz NOT NULL DEFAULT now(),
    applied_by name        NOT NULL DEFAULT session_user
);

CREATE TABLE propledger.crafts (
    name             text        PRIMARY KEY CHECK (name ~ '^[A-Za-z0-9][A-Za-z0-9._-]{0,63}$'),
    meta             json        NOT NULL,
    hash             text        NOT NULL CHECK (hash ~ '^[0-9a-f]{64}$'),
    imported         boolean     NOT NULL DEFAULT false,
    imported_through bigint      NOT NULL DEFAULT 0 CHECK (imported_through >= 0),
    created_by       name        NOT NULL DEFAULT session_user,
    created_at       timestamptz NOT NULL DEFAULT now()
);

CREATE TABLE propledger.entries (
    craft        text        NOT NULL REFERENCES propledger.crafts (name),
    seq          bigint      NOT NULL CHECK (seq >= 1),
    prev         text        NOT NULL,
    hash         text        NOT NULL CHECK (hash ~ '^[0-9a-f]{64}$'),
    body         json        NOT NULL,
    db_user      name        NOT NULL DEFAULT session_user,
    committed_at timestamptz NOT NULL DEFAULT now(),
    PRIMARY KEY (craft, seq),
    UNIQUE (craft, prev)
);

CREATE FUNCTION propledger.refuse_change() RETURNS trigger
LANGUAGE plpgsql SET search_path = pg_catalog, pg_temp AS $$
BEGIN
    RAISE EXCEPTION 'propledger: % on %.% refused: the ledger is append-only (record a correction instead)',
        TG_OP, TG_TABLE_SCHEMA, TG_TABLE_NAME USING ERRCODE = 'insufficient_privilege';
END $$;

CREATE FUNCTION propledger.craft_insert() RETURNS trigger
LANGUAGE plpgsql SET search_path = pg_catalog, pg_temp AS $$
BEGIN
    NEW.created_by := session_user;
    NEW.created_at := now();
    IF NEW.meta->>'hash' IS DISTINCT FROM NEW.hash THEN
        RAISE EXCEPTION 'propledger: craft %: its hash column differs from its record', NEW.name;
    END IF;
    IF NOT NEW.imported AND NEW.meta->>'by' IS DISTINCT FROM session_user::text THEN
        RAISE EXCEPTION 'propledger: craft %: the record''s by (%) is not the session user (%)',
            NEW.name, NEW.meta->>'by', session_user;
    END IF;
    RETURN NEW;
END $$;

CREATE FUNCTION propledger.entry_insert() RETURNS trigger
LANGUAGE plpgsql SET search_path = pg_catalog, pg_temp AS $$
DECLARE
    want text;
    imported bigint;
BEGIN
    NEW.db_user := session_user;
    NEW.committed_at := now();
    IF (NEW.body->>'seq') IS DISTINCT FROM NEW.seq::text OR (NEW.body->>'prev') IS DISTINCT FROM NEW.prev
       OR (NEW.body->>'hash') IS DISTINCT FROM NEW.hash THEN
        RAISE EXCEPTION 'propledger: entry % of craft %: its seq, prev and hash columns differ from its record',
            NEW.seq, NEW.craft;
    END IF;
    SELECT c.hash, c.imported_through INTO want, imported FROM propledger.crafts c WHERE c.name = NEW.craft;
    IF NEW.seq > 1 THEN
        SELECT e.hash INTO want FROM propledger.entries e WHERE e.craft = NEW.craft AND e.seq = NEW.seq - 1;
    END IF;
    IF want IS NULL THEN
        RAISE EXCEPTION 'propledger: entry % of craft % does not follow the chain head (no entry %)',
            NEW.seq, NEW.craft, NEW.seq - 1 USING ERRCODE = 'serialization_failure';
    END IF;
    IF NEW.prev <> want THEN
        RAISE EXCEPTION 'propledger: entry % of craft %: prev is not the hash of the entry before it',
            NEW.seq, NEW.craft;
    END IF;
    IF NEW.seq > imported AND (NEW.body->>'by') IS DISTINCT FROM session_user::text THEN
        RAISE EXCEPTION 'propledger: entry % of craft %: the record''s by (%) is not the session user (%)',
            NEW.seq, NEW.craft, NEW.body->>'by', session_user;
    END IF;
    RETURN NEW;
END $$;

CREATE FUNCTION propledger.entries_notify() RETURNS trigger
LANGUAGE plpgsql SET search_path = pg_catalog, pg_temp AS $$
DECLARE
    r record;
BEGIN
    FOR r IN SELECT n.craft, max(n.seq) AS seq FROM added n GROUP BY n.craft LOOP
        PERFORM pg_notify('propledger', r.craft || ' ' || r.seq);
    END LOOP;
    RETURN NULL;
END $$;

CREATE TRIGGER entry_insert BEFORE INSERT ON propledger.entries
    FOR EACH ROW EXECUTE FUNCTION propledger.entry_insert();
CREATE TRIGGER entries_notify AFTER INSERT ON propledger.entries
    REFERENCING NEW TABLE AS added FOR EACH STATEMENT EXECUTE FUNCTION propledger.entries_notify();
CREATE TRIGGER craft_insert BEFORE INSERT ON propledger.crafts
    FOR EACH ROW EXECUTE FUNCTION propledger.craft_insert();
"""

_REFUSE = """
CREATE TRIGGER {t}_no_change BEFORE UPDATE OR DELETE ON propledger.{t}
    FOR EACH ROW EXECUTE FUNCTION propledger.refuse_change();
CREATE TRIGGER {t}_no_truncate BEFORE TRUNCATE ON propledger.{t}
    FOR EACH STATEMENT EXECUTE FUNCTION propledger.refuse_change();
"""
CREATE += "".join(_REFUSE.format(t=t) for t in ("entries", "crafts", "versions"))
CREATE += f"INSERT INTO propledger.versions (version) VALUES ({VERSION});\n"

MIGRATIONS: dict[int, str] = {}
"""from-version -> the SQL that takes the layout to the next version (run in one transaction with the
row for the new version). Version 1 is the first layout, so the table is empty today."""

GRANTS = """
GRANT USAGE ON SCHEMA propledger TO {role};
GRANT SELECT, INSERT ON propledger.entries, propledger.crafts TO {role};
GRANT SELECT ON propledger.versions TO {role};
"""
"""What the program's role needs, and all it should have (docs/postgresql.md)."""
