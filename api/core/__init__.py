"""Cross-cutting service pieces: settings, database, problem details."""
