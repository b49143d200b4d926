"""Who may talk to the service, decided from the request line and headers alone.

The same rules run in Flask before every request and, under ``schemcheck serve``, in the
HTTP server as soon as the headers have arrived (before any body is read):

1. ``Host`` must name this service: the names it is bound to, ``localhost`` and the
   loopback addresses. A web page whose own name was made to resolve to 127.0.0.1 (DNS
   rebinding) sends its own name and is refused.
2. A request from a page of another site is refused: an ``Origin`` other than the
   service's own, or ``Sec-Fetch-Site: cross-site`` / ``same-site``.
3. The bearer token, when the service has one (the ``Bearer`` scheme in any case).
4. A ``multipart/form-data`` POST, which any web page can submit through a visitor's
   browser without asking, needs the token or the header ``X-Schemcheck-Client`` (a
   page on another site cannot add a header without the service's consent, which it
   never gives). JSON posts already need that consent; the other form encodings are
   refused by the route (415).
5. A declared ``Content-Length`` above the upload limit.
"""

from __future__ import annotations

import hmac
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from typing import Any
from urllib.parse import urlsplit

CLIENT_HEADER = "X-Schemcheck-Client"
LOOPBACK_NAMES = ("localhost", "127.0.0.1", "::1")
#: Addresses that bind every interface: any Host name reaches the service (and the
#: command requires a token there).
WILDCARD_HOSTS = ("0.0.0.0", "::", "")


@dataclass(frozen=True, slots=True)
class Refusal:
    """A request refused before it reaches a route: status, title, detail, headers."""

    status: int
    title: str
    detail: str
    headers: tuple[tuple[str, str], ...] = ()


def allowed_hosts(bound: str, extra: tuple[str, ...] = ()) -> list[str] | None:
    """The Host names a service bound to ``bound`` answers to (None: any, for a
    wildcard address)."""
    if bound in WILDCARD_HOSTS:
        return None
    names = [host_name(bound), *LOOPBACK_NAMES, *(host_name(e) for e in extra)]
    return list(dict.fromkeys(names))


def host_name(value: str) -> str:
    """``[::1]:8765`` -> ``::1``; ``LocalHost.:80`` -> ``localhost``."""
    value = value.strip().lower()
    if value.startswith("["):
        name = value[1:value.find("]")] if "]" in value else value[1:]
    elif value.count(":") == 1:
        name = value.split(":", 1)[0]
    else:
        name = value
    return name.rstrip(".")


def _host_port(value: str) -> tuple[str, int | None]:
    value = value.strip().lower()
    name = host_name(value)
    tail = value[value.find("]") + 1:] if value.startswith("[") else (
        value.split(":", 1)[1] if value.count(":") == 1 else "")
    tail = tail.lstrip(":")
    return name, int(tail) if tail.isdigit() else None


def _same_origin(origin: str, host: str) -> bool:
    try:
        parts = urlsplit(origin)
        origin_port = parts.port
    except ValueError:
        return False
    if parts.scheme != "http" or not parts.hostname:
        return False
    name, port = _host_port(host)
    return (parts.hostname.rstrip(".") == name
            and (origin_port or 80) == (port or 80))


def bearer_matches(header: str | None, token: str) -> bool:
    """``Authorization: Bearer <token>`` (the scheme in any case, RFC 9110 §11.1)."""
    scheme, _, credentials = (header or "").strip().partition(" ")
    return scheme.lower() == "bearer" and hmac.compare_digest(
        credentials.strip().encode("utf-8", "surrogatepass"), token.encode("utf-8"))


def unauthorised(header: str | None) -> Refusal:
    challenge = 'Bearer realm="schemcheck"' + (', error="invalid_token"' if header else "")
    return Refusal(401, "Unauthorised", "expected the header 'Authorization: Bearer <token>' "
                   "with this service's token", (("WWW-Authenticate", challenge),))


def check(method: str, header: Callable[[str], str | None],
          config: Mapping[str, Any]) -> Refusal | None:
    """The refusal of a request with ``method`` and headers (``header(name)``), or None."""
    hosts = config.get("ALLOWED_HOSTS")
    host = header("Host")
    if hosts is not None and host is not None and host_name(host) not in hosts:
        return Refusal(403, "Host not allowed",
                       f"this service answers to the host names {', '.join(hosts)}, not "
                       f"{host_name(host)!r} (a page of another site must not reach it "
                       "through its own name)")
    origin = header("Origin")
    fetch_site = (header("Sec-Fetch-Site") or "").strip().lower()
    if ((origin is not None and not _same_origin(origin, host or ""))
            or fetch_site in ("cross-site", "same-site")):
        return Refusal(403, "Cross-site request refused",
                       "the request comes from a page of another site "
                       f"(Origin {origin!r}); this service serves tools on this machine only")
    token = config.get("TOKEN")
    authorisation = header("Authorization")
    if token and not bearer_matches(authorisation, token):
        return unauthorised(authorisation)
    content_type = (header("Content-Type") or "").split(";", 1)[0].strip().lower()
    if (method == "POST" and content_type == "multipart/form-data" and not token
            and not (header(CLIENT_HEADER) or "").strip()):
        return Refusal(403, "Cross-site form refused",
                       f"an upload must carry the header '{CLIENT_HEADER}: <your tool's "
                       "name>' (or the bearer token): a web page of another site cannot "
                       "send it, so it cannot submit designs through a visitor's browser")
    length = header("Content-Length")
    limit = config.get("MAX_CONTENT_LENGTH")
    if limit is not None and length is not None and length.strip().isdigit() \
            and int(length) > limit:
        return Refusal(413, "Request Entity Too Large",
                       f"the request declares a body of {int(length)} bytes; this service "
                       f"takes at most {limit} bytes (nothing was read)")
    return None
