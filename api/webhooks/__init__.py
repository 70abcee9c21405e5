"""Webhook subscriptions, the event outbox, signed delivery with retries, address policy."""
