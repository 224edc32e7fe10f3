"""Shared pytest fixtures. Keep this file small: each fixture lives in its own module."""

from pg_server import postgres_url  # noqa: F401  (throw-away PostgreSQL server, session scope)
