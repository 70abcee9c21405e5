"""Readings: REST ingest (row and columnar) and the bulk upsert."""
