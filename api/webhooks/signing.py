"""Secrets and signatures of the Standard Webhooks specification.

Each request carries three headers (Standard Webhooks specification, version 1.0.0,
sections "Signature scheme" and "Webhook headers"):

* ``webhook-id`` — the event id, the same on every retry (receivers deduplicate on it);
* ``webhook-timestamp`` — integer Unix seconds of this attempt;
* ``webhook-signature`` — ``v1,<base64(HMAC-SHA256(key, "{id}.{timestamp}.{body}"))>``,
  several space-separated when more than one secret is live (a rotation's overlap).

A secret is ``whsec_`` followed by the base64 of random bytes (the specification: at least
24 bytes, 512 bits at most); the HMAC key is the decoded bytes, not the text.
"""

from __future__ import annotations

import base64
import binascii
import hashlib
import hmac
import secrets
from collections.abc import Iterable, Mapping

SECRET_PREFIX = "whsec_"
SECRET_BYTES = 32
"""Random bytes of a generated secret (the specification asks for 24 to 64)."""
MIN_SECRET_BYTES, MAX_SECRET_BYTES = 24, 64
SIGNATURE_VERSION = "v1"
TOLERANCE_SECONDS = 300
"""Largest clock difference a receiver should accept (replay protection)."""


def generate_secret() -> str:
    """A new ``whsec_`` secret of :data:`SECRET_BYTES` random bytes."""
    return SECRET_PREFIX + base64.b64encode(secrets.token_bytes(SECRET_BYTES)).decode("ascii")


def secret_key(secret: str) -> bytes:
    """The HMAC key of a ``whsec_`` secret; ``ValueError`` saying what is wrong."""
    if not secret.startswith(SECRET_PREFIX):
        raise ValueError(f"a webhook secret starts with {SECRET_PREFIX!r}")
    text = secret[len(SECRET_PREFIX) :]
    try:
        # Padding may be left off (the reference implementation accepts that too).
        key = base64.b64decode(text + "=" * (-len(text) % 4), validate=True)
    except (binascii.Error, ValueError):
        raise ValueError("the part after 'whsec_' is not valid base64") from None
    if not MIN_SECRET_BYTES <= len(key) <= MAX_SECRET_BYTES:
        raise ValueError(
            f"a webhook secret holds {MIN_SECRET_BYTES} to {MAX_SECRET_BYTES} bytes, "
            f"this one {len(key)}"
        )
    return key


def sign(secret: str, msg_id: str, timestamp: int, body: bytes) -> str:
    """One ``v1,<base64>`` signature of ``body`` for ``msg_id`` at ``timestamp``."""
    content = f"{msg_id}.{timestamp}.".encode() + body
    digest = hmac.new(secret_key(secret), content, hashlib.sha256).digest()
    return f"{SIGNATURE_VERSION},{base64.b64encode(digest).decode('ascii')}"


def signature_header(live_secrets: Iterable[str], msg_id: str, timestamp: int, body: bytes) -> str:
    """The ``webhook-signature`` value: one signature per live secret, space-separated."""
    return " ".join(sign(s, msg_id, timestamp, body) for s in live_secrets)


def headers(
    live_secrets: Iterable[str], msg_id: str, timestamp: int, body: bytes
) -> dict[str, str]:
    """The three Standard Webhooks headers of one attempt."""
    return {
        "webhook-id": msg_id,
        "webhook-timestamp": str(timestamp),
        "webhook-signature": signature_header(live_secrets, msg_id, timestamp, body),
    }


class InvalidSignature(ValueError):
    """A received request whose headers do not verify."""


def verify(
    secret: str,
    request_headers: Mapping[str, str],
    body: bytes,
    *,
    now: float,
    tolerance_s: float = TOLERANCE_SECONDS,
) -> str:
    """Check a received request against ``secret``; returns its ``webhook-id``.

    For receivers (``lostwork webhook-receiver``): the timestamp must be within
    ``tolerance_s`` of ``now`` and at least one ``v1`` signature must match, compared in
    constant time. Raises :class:`InvalidSignature` saying why not.
    """
    lower = {k.lower(): v for k, v in request_headers.items()}
    msg_id, stamp, given = (
        lower.get(h) for h in ("webhook-id", "webhook-timestamp", "webhook-signature")
    )
    if not (msg_id and stamp and given):
        raise InvalidSignature("missing webhook-id, webhook-timestamp or webhook-signature")
    try:
        timestamp = int(stamp)
    except ValueError:
        raise InvalidSignature(f"webhook-timestamp {stamp!r} is not an integer") from None
    if abs(now - timestamp) > tolerance_s:
        raise InvalidSignature(f"webhook-timestamp is {now - timestamp:+.0f} s from now")
    expected = sign(secret, msg_id, timestamp, body).split(",", 1)[1]
    for candidate in given.split(" "):
        version, _, value = candidate.partition(",")
        if version == SIGNATURE_VERSION and hmac.compare_digest(value, expected):
            return msg_id
    raise InvalidSignature("no signature matches the secret")
