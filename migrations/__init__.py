"""Alembic migrations: the only way plantdb's schema is made or changed."""
