"""Storage: the engine, the SQLModel tables, owner/visibility checks with versioned updates, and the Alembic migrations."""
