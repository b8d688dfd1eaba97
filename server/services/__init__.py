"""Use cases that join the database and the engine; keyword-only functions named by verb."""
