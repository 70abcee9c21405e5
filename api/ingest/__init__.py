"""Ingest: turning what plants send (REST batches, shift-log files) into SI readings."""
