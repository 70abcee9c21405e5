"""Signatures against the reference implementation, the address policy, and the
subscription API. No request leaves the process here: a guard on socket.connect fails
any test that would open a connection.

Address categories are those of the IANA special-purpose registries as the RFCs define
them: RFC 1918 (private IPv4), RFC 1122 s. 3.2.1.3 (127/8 loopback), RFC 3927
(169.254/16 link-local), RFC 6598 (100.64/10 shared), RFC 4291 (::1, fe80::/10,
ff00::/8), RFC 4193 (fc00::/7 unique local), RFC 5771 (224/4 multicast).
"""

from __future__ import annotations

import base64
import datetime as dt
import ipaddress
import socket
import time

import pytest
from sqlalchemy import select
from standardwebhooks.webhooks import Webhook, WebhookVerificationError

from api.webhooks import signing
from api.webhooks.addresses import AddressRefused, category, check_url
from api.webhooks.delivery import DeliveryOptions, attempt, claim_next, record
from api.webhooks.models import WebhookAttempt, WebhookDelivery

WEBHOOKS = "/api/v1/webhooks"
SETTING = "LOSTWORK_WEBHOOK_ALLOW_LIST"


@pytest.fixture(autouse=True)
def no_connections(monkeypatch):
    """Every socket connection attempt is recorded and refused."""
    tried: list[object] = []

    def refuse(self, address):  # type: ignore[no-untyped-def]
        tried.append(address)
        raise AssertionError(f"a connection to {address} was attempted")

    monkeypatch.setattr(socket.socket, "connect", refuse)
    monkeypatch.setattr(socket.socket, "connect_ex", refuse)
    return tried


# --------------------------------------------------------------------------- signatures


def test_signature_matches_the_published_test_vector() -> None:
    # standard-webhooks repository, libraries/python/tests/test_webhooks.py,
    # test_sign_function: this key, id, timestamp and payload give this signature.
    signature = signing.sign(
        "whsec_MfKQ9r8GKYqrTwjUPD8ILPZIo2LaLaSw",
        "msg_p5jXN8AQM9LWM0D4loKWxJek",
        1614265330,
        b'{"test": 2432232314}',
    )
    assert signature == "v1,g0hM9SsE+OTPJTGt/tmIKtSyZlE3uFJELVlNIOLJ1OE="


def test_two_live_secrets_each_verify_with_the_reference_verifier() -> None:
    old, new = signing.generate_secret(), signing.generate_secret()
    body = b'{"type":"webhook.test","id":"evt_1"}'
    headers = signing.headers([new, old], "evt_1", int(time.time()), body)
    assert headers["webhook-signature"].count("v1,") == 2
    for secret in (old, new):
        assert Webhook(secret).verify(body, headers) == {"type": "webhook.test", "id": "evt_1"}
    with pytest.raises(WebhookVerificationError, match="No matching signature found"):
        Webhook(signing.generate_secret()).verify(body, headers)
    # The receiver's own check agrees with the reference on both counts.
    assert signing.verify(old, headers, body, now=time.time()) == "evt_1"
    with pytest.raises(signing.InvalidSignature, match="no signature matches the secret"):
        signing.verify(old, headers, body + b" ", now=time.time())
    with pytest.raises(signing.InvalidSignature, match=r"webhook-timestamp is \+301 s from now"):
        signing.verify(old, headers, body, now=int(headers["webhook-timestamp"]) + 301)


def test_secrets_follow_the_specification() -> None:
    secret = signing.generate_secret()
    assert secret.startswith("whsec_")
    assert len(base64.b64decode(secret[6:])) == 32
    with pytest.raises(ValueError, match="a webhook secret starts with 'whsec_'"):
        signing.secret_key("MfKQ9r8GKYqrTwjUPD8ILPZIo2LaLaSw")
    short = "whsec_" + base64.b64encode(b"x" * 16).decode()
    with pytest.raises(ValueError, match="holds 24 to 64 bytes, this one 16"):
        signing.secret_key(short)


# --------------------------------------------------------------------------- addresses


@pytest.mark.parametrize(
    ("address", "why"),
    [
        ("10.0.0.5", "private"),  # RFC 1918
        ("192.168.1.10", "private"),  # RFC 1918
        ("172.16.0.1", "private"),  # RFC 1918
        ("127.0.0.1", "loopback"),
        ("169.254.169.254", "link-local"),  # RFC 3927 (cloud metadata services sit here)
        ("100.64.0.1", "not globally routable"),  # RFC 6598 shared address space
        ("224.0.0.1", "multicast"),
        ("0.0.0.0", "unspecified"),
        ("::1", "loopback"),
        ("fe80::1", "link-local"),
        ("fd12:3456::1", "unique-local"),  # RFC 4193
        ("ff02::1", "multicast"),
        ("::", "unspecified"),
        ("::ffff:10.0.0.5", "private"),  # IPv4-mapped: judged as 10.0.0.5
        ("8.8.8.8", None),
        ("2001:4860:4860::8888", None),
    ],
)
def test_address_categories(address: str, why: str | None) -> None:
    assert category(ipaddress.ip_address(address)) == why


@pytest.mark.parametrize("url", ["http://10.0.0.5/hook", "https://192.168.1.10:8443/hook"])
def test_private_urls_are_refused_before_any_connection(url, no_connections) -> None:
    with pytest.raises(AddressRefused) as caught:
        check_url(url, [])
    host = url.split("//")[1].split(":")[0].split("/")[0]
    assert caught.value.detail == (
        f"the webhook URL {url!r} is refused: {host}, a private address: webhooks to "
        "loopback, private, link-local, unique-local, multicast and other internal addresses "
        f"are refused unless {SETTING} names them"
    )
    assert caught.value.extensions == {"address": host, "reason": "private", "setting": SETTING}
    assert no_connections == []


def test_allow_list_entries() -> None:
    assert check_url("http://10.0.0.5:9000/x", ["10.0.0.0/8"]).url == "http://10.0.0.5:9000/x"
    assert check_url("http://[::1]/x", ["::1"]).address == "::1"

    def resolver(host: str, port: int) -> list[str]:
        return {"receiver.plant.test": ["192.168.7.7"]}[host]

    target = check_url("https://receiver.plant.test/x", ["receiver.plant.test"], resolver=resolver)
    assert (target.url, target.host_header, target.host) == (
        "https://192.168.7.7:443/x",
        "receiver.plant.test",
        "receiver.plant.test",
    )
    with pytest.raises(AddressRefused, match="'receiver.plant.test' resolves to 192.168.7.7"):
        check_url("https://receiver.plant.test/x", ["10.0.0.0/8"], resolver=resolver)


def test_malformed_urls_are_refused() -> None:
    with pytest.raises(AddressRefused, match="is http:// or https:// with a host"):
        check_url("ftp://files.plant.test/x", [])
    with pytest.raises(AddressRefused, match="carries no user name or password"):
        check_url("https://user:pw@8.8.8.8/x", [])


# --------------------------------------------------------------------------- API


def test_subscribing_a_private_address_is_a_clear_problem(client, admin) -> None:
    response = client.post(WEBHOOKS, json={"url": "http://10.0.0.5/hook"}, headers=admin)
    assert response.status_code == 422
    body = response.json()
    assert body["type"] == "urn:lostwork:problem:webhook-address-refused"
    assert (body["address"], body["setting"]) == ("10.0.0.5", SETTING)
    assert body["errors"][0]["field"] == "url"
    assert body["errors"][0]["message"].startswith("10.0.0.5, a private address")
    assert client.get(WEBHOOKS, headers=admin).json()["webhooks"] == []


def test_subscription_lifecycle(client, plant, admin, app) -> None:
    app.state.webhook_resolver = lambda host, port: {"hooks.plant.test": ["8.8.8.8"]}[host]
    typo = client.post(
        WEBHOOKS,
        json={"url": "https://hooks.plant.test/in", "units": ["boiler-a", "boiler-q"]},
        headers=admin,
    )
    assert typo.status_code == 422
    assert typo.json()["errors"] == [{"field": "units[1]", "message": "no unit 'boiler-q'"}]
    created = client.post(
        WEBHOOKS,
        json={
            "url": "https://hooks.plant.test/in",
            "event_types": ["alert.fired"],
            "severities": ["critical"],
            "units": ["boiler-a"],
        },
        headers=admin,
    )
    assert created.status_code == 201, created.text
    sub = created.json()
    assert sub["secret"].startswith("whsec_") and (sub["pending"], sub["failed"]) == (0, 0)
    read = client.get(f"{WEBHOOKS}/{sub['id']}", headers=admin).json()
    assert "secret" not in read and read["event_types"] == ["alert.fired"]

    patched = client.patch(
        f"{WEBHOOKS}/{sub['id']}", json={"enabled": False, "severities": None}, headers=admin
    ).json()
    assert (patched["enabled"], patched["severities"], patched["units"]) == (
        False,
        None,
        ["boiler-a"],
    )
    moved = client.patch(
        f"{WEBHOOKS}/{sub['id']}", json={"url": "http://192.168.1.10/"}, headers=admin
    )
    assert moved.status_code == 422 and moved.json()["address"] == "192.168.1.10"

    rotated = client.post(
        f"{WEBHOOKS}/{sub['id']}/rotate-secret", json={"overlap_seconds": 3600}, headers=admin
    ).json()
    assert rotated["secret"] != sub["secret"]
    expires = dt.datetime.fromisoformat(rotated["previous_secret_expires_at"])
    assert 3590 < (expires - dt.datetime.now(dt.UTC)).total_seconds() <= 3600
    bad = client.post(
        f"{WEBHOOKS}/{sub['id']}/rotate-secret", json={"secret": "whsec_abc"}, headers=admin
    )
    assert bad.status_code == 422
    assert bad.json()["detail"] == "secret: a webhook secret holds 24 to 64 bytes, this one 2"

    queued = client.post(f"{WEBHOOKS}/{sub['id']}/test", headers=admin)
    assert queued.status_code == 202
    deliveries = client.get(f"{WEBHOOKS}/{sub['id']}/deliveries", headers=admin).json()
    assert [(d["event_id"], d["event_type"], d["state"]) for d in deliveries["deliveries"]] == [
        (queued.json()["event_id"], "webhook.test", "pending")
    ]
    assert client.delete(f"{WEBHOOKS}/{sub['id']}", headers=admin).status_code == 204
    assert client.get(f"{WEBHOOKS}/{sub['id']}", headers=admin).status_code == 404


def test_dns_rebinding_is_refused_at_delivery_time(
    client, admin, app, session_factory, no_connections
) -> None:
    # At subscription time the name resolves to a public address (nothing connects to
    # it); at delivery time it resolves to a private one: the attempt is refused before
    # any connection and the delivery fails for good.
    app.state.webhook_resolver = lambda host, port: ["8.8.8.8"]
    sub = client.post(WEBHOOKS, json={"url": "http://hooks.plant.test/in"}, headers=admin).json()
    client.post(f"{WEBHOOKS}/{sub['id']}/test", headers=admin)

    options = DeliveryOptions(resolver=lambda host, port: ["10.0.0.5"])
    with session_factory() as s:
        claimed = claim_next(s, "tester", options)
    assert claimed is not None
    result = attempt(claimed, None, options)  # type: ignore[arg-type]  # never reaches HTTP
    with session_factory() as s:
        assert record(s, claimed, result, options) == "refused"
        delivery = s.scalars(select(WebhookDelivery)).one()
        logged = s.scalars(select(WebhookAttempt)).one()
    assert delivery.state == "failed"
    assert (logged.outcome, logged.address, logged.status_code) == ("refused", "10.0.0.5", None)
    assert logged.error == (
        "the webhook URL 'http://hooks.plant.test/in' is refused: 'hooks.plant.test' resolves "
        "to 10.0.0.5, a private address: webhooks to loopback, private, link-local, "
        "unique-local, multicast and other internal addresses are refused unless "
        f"{SETTING} names them"
    )
    assert no_connections == []
