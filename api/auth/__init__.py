"""API keys and scopes."""
