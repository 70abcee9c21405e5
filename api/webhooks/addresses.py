"""Where webhooks may go: refuse internal destinations (server-side request forgery).

A webhook URL is checked twice: when a subscription is created or changed, and before
every delivery attempt after resolving its host name. The delivery then connects to the
very address that was checked (the URL's host is replaced by it; ``Host`` and TLS SNI keep
the name), so a name that resolves to a public address at check time and to an internal
one a moment later (DNS rebinding) never reaches the internal one.

Refused: loopback, private (RFC 1918 and the other ranges Python's ``ipaddress`` lists as
private), link-local, unique-local IPv6, multicast, unspecified, reserved, and anything
else not globally routable (shared address space, documentation ranges); IPv4-mapped IPv6
addresses are judged as the IPv4 address they carry. ``LOSTWORK_WEBHOOK_ALLOW_LIST``
(``Settings.webhook_allow_list``) names exceptions: an IP address, a CIDR range, or a
host name (every address that name resolves to is then allowed).
"""

from __future__ import annotations

import ipaddress
import socket
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass
from urllib.parse import urlsplit

from api.core.problems import ProblemError

ALLOW_LIST_SETTING = "LOSTWORK_WEBHOOK_ALLOW_LIST"
SCHEMES = ("http", "https")

IPAddress = ipaddress.IPv4Address | ipaddress.IPv6Address
Resolver = Callable[[str, int], Sequence[str]]
"""(host, port) -> IP address texts."""


class AddressRefused(ProblemError):
    """A webhook destination the address policy does not allow."""

    status, slug, title = 422, "webhook-address-refused", "Webhook destination refused"


class UnreachableHost(ProblemError):
    status, slug, title = 422, "webhook-host-unresolved", "Webhook host not resolved"


@dataclass(frozen=True)
class Target:
    """A checked destination: connect to ``address`` while naming ``host``."""

    scheme: str
    host: str
    port: int
    address: str
    url: str
    """The URL to request, with the host replaced by ``address``."""
    host_header: str


def system_resolver(host: str, port: int) -> list[str]:
    """Every address the system resolver gives for ``host`` (IPv4 and IPv6)."""
    infos = socket.getaddrinfo(host, port, type=socket.SOCK_STREAM)
    return list(dict.fromkeys(str(info[4][0]) for info in infos))


def category(address: IPAddress) -> str | None:
    """Why ``address`` is internal (``"loopback"``, ``"private"``, ...), None if public."""
    if isinstance(address, ipaddress.IPv6Address) and address.ipv4_mapped is not None:
        return category(address.ipv4_mapped)
    if address.is_unspecified:
        return "unspecified"
    if address.is_loopback:
        return "loopback"
    if address.is_link_local:
        return "link-local"
    if address.is_multicast:
        return "multicast"
    if isinstance(address, ipaddress.IPv6Address) and address in _UNIQUE_LOCAL:
        return "unique-local"
    if address.is_private:
        return "private"
    if address.is_reserved:
        return "reserved"
    if not address.is_global:
        return "not globally routable"
    return None


_UNIQUE_LOCAL = ipaddress.IPv6Network("fc00::/7")


def _allowed(address: IPAddress, host: str, allow_list: Iterable[str]) -> bool:
    for entry in allow_list:
        entry = entry.strip()
        if not entry:
            continue
        if "/" in entry:
            if address in ipaddress.ip_network(entry, strict=False):
                return True
            continue
        try:
            if address == ipaddress.ip_address(entry.strip("[]")):
                return True
        except ValueError:
            if entry.lower().rstrip(".") == host.lower().rstrip("."):
                return True
    return False


def _split(url: str, field: str) -> tuple[str, str, int]:
    try:
        parts = urlsplit(url)
        port = parts.port
    except ValueError as exc:
        raise AddressRefused(
            f"the webhook URL {url!r} is not valid: {exc}",
            errors=[{"field": field, "message": str(exc)}],
        ) from None
    if parts.scheme not in SCHEMES or not parts.hostname:
        message = "a webhook URL is http:// or https:// with a host name or address"
        raise AddressRefused(
            f"the webhook URL {url!r} is not valid: {message}",
            errors=[{"field": field, "message": message}],
        )
    if parts.username or parts.password:
        message = "a webhook URL carries no user name or password (the signature authenticates)"
        raise AddressRefused(message, errors=[{"field": field, "message": message}])
    default = 443 if parts.scheme == "https" else 80
    return parts.scheme, parts.hostname, port or default


def check_url(
    url: str,
    allow_list: Iterable[str],
    *,
    resolver: Resolver = system_resolver,
    field: str = "url",
) -> Target:
    """Resolve ``url``'s host and check every address; the first one to connect to.

    Raises :class:`AddressRefused` naming the address, why it is refused and the
    setting that would allow it, or :class:`UnreachableHost` when the name does not
    resolve. No connection is made here.
    """
    allow = list(allow_list)
    scheme, host, port = _split(url, field)
    try:
        literal: IPAddress | None = ipaddress.ip_address(host)
    except ValueError:
        literal = None
    if literal is not None:
        addresses = [literal]
    else:
        try:
            addresses = [ipaddress.ip_address(a.split("%")[0]) for a in resolver(host, port)]
        except (OSError, UnicodeError) as exc:
            raise UnreachableHost(
                f"the webhook host {host!r} does not resolve: {exc}",
                errors=[{"field": field, "message": f"{host!r} does not resolve"}],
                host=host,
            ) from None
        if not addresses:
            raise UnreachableHost(
                f"the webhook host {host!r} resolves to no address",
                errors=[{"field": field, "message": f"{host!r} resolves to no address"}],
                host=host,
            )
    for address in addresses:
        why = category(address)
        if why is not None and not _allowed(address, host, allow):
            via = "" if literal is not None else f"{host!r} resolves to "
            message = (
                f"{via}{address}, a {why} address: webhooks to loopback, private, "
                f"link-local, unique-local, multicast and other internal addresses are "
                f"refused unless {ALLOW_LIST_SETTING} names them"
            )
            raise AddressRefused(
                f"the webhook URL {url!r} is refused: {message}",
                errors=[{"field": field, "message": message}],
                address=str(address),
                reason=why,
                setting=ALLOW_LIST_SETTING,
            )
    chosen = addresses[0]
    netloc = f"[{chosen}]" if chosen.version == 6 else str(chosen)
    parts = urlsplit(url)
    default = 443 if scheme == "https" else 80
    pinned = parts._replace(netloc=f"{netloc}:{port}").geturl()
    display_host = f"[{host}]" if ":" in host else host
    host_header = display_host if port == default else f"{display_host}:{port}"
    return Target(scheme, host, port, str(chosen), pinned, host_header)
