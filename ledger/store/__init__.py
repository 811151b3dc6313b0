"""Persistence: one TinyDB file per ledger behind a durable storage, a lock and a hash chain."""
