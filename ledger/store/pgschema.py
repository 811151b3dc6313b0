"""The database layout of a PostgreSQL ledger, as SQL, with its version and migration steps.

Everything lives in one schema, ``propledger``: ``crafts`` (one row per craft: its definition record,
the chain's first link), ``entries`` (the records, one chain per craft) and ``versions`` (the layout
versions applied, newest last). The rules are kept by the server, not by the program:
- ``entries`` and ``crafts`` refuse UPDATE, DELETE and TRUNCATE (a trigger; grants should also give the
  program's role only SELECT and INSERT, docs/postgresql.md);
- an entry is accepted only as the next link of its craft's chain: ``(craft, seq)`` is the primary key
  and a check run once per INSERT or COPY statement, over all the rows it added (layout 2; layout 1
  ran it per row), refuses the statement unless each row's ``prev`` is the hash of entry ``seq - 1``
  (or of the craft link) and its columns agree with its record;
- ``db_user`` is ``session_user`` and ``committed_at`` the transaction's time, given by the server
  (a statement that sets either to anything else is refused); the record's ``by`` must equal
  ``db_user`` (except for a craft copied in from a file ledger: its craft link and its entries up to
  ``crafts.imported_through`` keep the names the file recorded; ``db_user`` still says who copied them);
- a committed insert sends ``NOTIFY propledger, '<craft> <last seq>'`` for the consoles;
- ``append_entries`` (layout 2) is the program's append in one round trip: it takes the craft's
  advisory lock, and inserts the new links only if they follow the current head, else returns the head.
A new database gets layout 1 (``CREATE``) and then every migration, as an old one does.
"""
from __future__ import annotations

SCHEMA_NAME = "propledger"
VERSION = 2
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
CREATE += "INSERT INTO propledger.versions (version) VALUES (1);\n"
"""Layout 1, as it first shipped; ``MIGRATIONS`` take it to ``VERSION``."""

TO_2 = r"""
DROP TRIGGER entry_insert ON propledger.entries;
DROP TRIGGER entries_notify ON propledger.entries;
DROP FUNCTION propledger.entry_insert();
DROP FUNCTION propledger.entries_notify();
ALTER TABLE propledger.entries DROP CONSTRAINT entries_hash_check,
    ADD CONSTRAINT entries_hash_check CHECK (length(hash) = 64 AND hash ~ '^[0-9a-f]+$');

CREATE FUNCTION propledger.entries_added() RETURNS trigger
LANGUAGE plpgsql SET search_path = pg_catalog, pg_temp AS $$
DECLARE
    bad record;
    r record;
BEGIN
    SELECT n.craft, n.seq, n.db_user, n.body->>'by' AS who, CASE
        WHEN n.db_user <> session_user OR n.committed_at <> now() THEN 'server'
        WHEN (n.b->>'seq') IS DISTINCT FROM n.seq::text OR (n.b->>'prev') IS DISTINCT FROM n.prev
             OR (n.b->>'hash') IS DISTINCT FROM n.hash THEN 'columns'
        WHEN c.name IS NULL OR (n.seq > 1 AND p.hash IS NULL) THEN 'head'
        WHEN n.prev IS DISTINCT FROM CASE WHEN n.seq = 1 THEN c.hash ELSE p.hash END THEN 'prev'
        ELSE 'by' END AS why
    INTO bad
    FROM (SELECT a.*, a.body::jsonb AS b FROM added a OFFSET 0) n  -- OFFSET 0: each body parsed once
    LEFT JOIN propledger.crafts c ON c.name = n.craft
    LEFT JOIN propledger.entries p ON p.craft = n.craft AND p.seq = n.seq - 1 AND n.seq > 1
    WHERE n.db_user <> session_user OR n.committed_at <> now()
       OR (n.b->>'seq') IS DISTINCT FROM n.seq::text OR (n.b->>'prev') IS DISTINCT FROM n.prev
       OR (n.b->>'hash') IS DISTINCT FROM n.hash
       OR c.name IS NULL OR (n.seq > 1 AND p.hash IS NULL)
       OR n.prev IS DISTINCT FROM CASE WHEN n.seq = 1 THEN c.hash ELSE p.hash END
       OR (n.seq > c.imported_through AND (n.b->>'by') IS DISTINCT FROM session_user::text)
    ORDER BY n.seq LIMIT 1;
    IF FOUND THEN
        IF bad.why = 'server' THEN
            RAISE EXCEPTION 'propledger: entry % of craft %: db_user and committed_at are the server''s',
                bad.seq, bad.craft USING ERRCODE = 'insufficient_privilege';
        ELSIF bad.why = 'columns' THEN
            RAISE EXCEPTION 'propledger: entry % of craft %: its seq, prev and hash columns differ from its record',
                bad.seq, bad.craft;
        ELSIF bad.why = 'head' THEN
            RAISE EXCEPTION 'propledger: entry % of craft % does not follow the chain head (no entry %)',
                bad.seq, bad.craft, bad.seq - 1 USING ERRCODE = 'serialization_failure';
        ELSIF bad.why = 'prev' THEN
            RAISE EXCEPTION 'propledger: entry % of craft %: prev is not the hash of the entry before it',
                bad.seq, bad.craft;
        ELSE
            RAISE EXCEPTION 'propledger: entry % of craft %: the record''s by (%) is not the session user (%)',
                bad.seq, bad.craft, bad.who, session_user;
        END IF;
    END IF;
    FOR r IN SELECT n.craft, max(n.seq) AS seq FROM added n GROUP BY n.craft LOOP
        PERFORM pg_notify('propledger', r.craft || ' ' || r.seq);
    END LOOP;
    RETURN NULL;
END $$;

CREATE TRIGGER entries_added AFTER INSERT ON propledger.entries
    REFERENCING NEW TABLE AS added FOR EACH STATEMENT EXECUTE FUNCTION propledger.entries_added();

CREATE FUNCTION propledger.append_entries(p_craft text, p_seq bigint, p_prev text, p_hashes text[], p_bodies json[],
                                          OUT head_seq bigint, OUT head_hash text)
LANGUAGE plpgsql SET search_path = pg_catalog, pg_temp AS $$
BEGIN
    PERFORM pg_advisory_xact_lock(hashtext('propledger ' || p_craft));
    SELECT e.seq, e.hash INTO head_seq, head_hash FROM propledger.entries e
        WHERE e.craft = p_craft ORDER BY e.seq DESC LIMIT 1;
    IF NOT FOUND THEN
        SELECT 0, c.hash INTO head_seq, head_hash FROM propledger.crafts c WHERE c.name = p_craft;
    END IF;
    IF head_seq IS DISTINCT FROM p_seq - 1 OR head_hash IS DISTINCT FROM p_prev THEN
        RETURN;  -- not the head (another writer was first): the caller links onto the head returned
    END IF;
    INSERT INTO propledger.entries (craft, seq, prev, hash, body)
        SELECT p_craft, p_seq + i - 1, CASE WHEN i = 1 THEN p_prev ELSE p_hashes[i - 1] END, p_hashes[i], p_bodies[i]
        FROM generate_subscripts(p_hashes, 1) AS i;
    head_seq := p_seq + cardinality(p_hashes) - 1;
    head_hash := p_hashes[cardinality(p_hashes)];
END $$;
"""
"""Layout 2: the chain check once per statement over its transition table (a 100k-entry copy was 0.4 ms
a row with the per-row trigger and a regular expression ``{64}`` per hash), and the one-round-trip append."""

MIGRATIONS: dict[int, str] = {1: TO_2}
"""from-version -> the SQL that takes the layout to the next version (run in one transaction with the
row for the new version, by the first propledger that reads the database as the tables' owner)."""

GRANTS = """
GRANT USAGE ON SCHEMA propledger TO {role};
GRANT SELECT, INSERT ON propledger.entries, propledger.crafts TO {role};
GRANT SELECT ON propledger.versions TO {role};
GRANT EXECUTE ON FUNCTION propledger.append_entries(text, bigint, text, text[], json[]) TO {role};
"""
"""What the program's role needs, and all it should have (docs/postgresql.md)."""
