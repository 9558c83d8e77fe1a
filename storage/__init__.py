"""Persistence: an immutable, auditable record of series versions, runs, their results and
the forecast ledger, on SQLite or PostgreSQL. No HTTP here.

Subpackages, one concept each, each with its public names in its ``__init__``:

- ``db``: engines and sessions (``FOLDLINE_DATABASE_URL``), migrations, tables, column
  types, the write lock, bulk inserts, the append-only guard, status, the BI views;
- ``series``: series and their immutable versions, found by key, prefix and tags;
- ``specs`` (a module): candidates and plans, stored once under content-derived ids;
- ``runs``: queueing (one idempotency rule), the lifecycle, claims and leases, finding runs;
- ``results``: a run's results written and read per series, as rows, paged tables and the
  SQL ranking;
- ``ledger``: champions, issued forecasts, outcomes, the series dossier;
- ``audit``: the hash-chained event log, what it vouches for, verification, checkpoints;
- ``access``: API keys and ended page sessions;
- ``errors`` (a module): the storage error hierarchy, each error with a stable code.

Imports point one way: ``db`` <- ``audit`` <- ``series``, ``access``, ``specs`` <- ``results``
<- ``runs``; ``ledger`` reads ``series`` and ``specs``. Storage functions take a
:class:`~sqlalchemy.orm.Session` and never commit: the caller owns the transaction.
"""
