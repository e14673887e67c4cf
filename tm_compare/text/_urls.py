"""URL canonicalisation, so that one article reached through several links is one document.

The rules follow RFC 3986 section 6.2 where it speaks (scheme and host are
case-insensitive, default ports are redundant, percent-encodings compare
case-insensitively and unreserved characters need no encoding, dot segments
resolve) and common practice for news links where it does not (``www.``,
fragments, tracking parameters, query order and trailing slashes carry no
content).
"""

from __future__ import annotations

import fnmatch
import functools
import re
from collections.abc import Iterable
from urllib.parse import unquote

import pandas as pd

from ..errors import InputError

#: Query parameters dropped by default: campaign tags (``utm_*``) and the click
#: identifiers that ad, mail and social platforms append to outgoing links.
#: Shell-style patterns, matched case-insensitively against the parameter name.
TRACKING_PARAMS: tuple[str, ...] = (
    "utm_*",
    "fbclid",
    "gclid",
    "gclsrc",
    "dclid",
    "gbraid",
    "wbraid",
    "msclkid",
    "yclid",
    "twclid",
    "ttclid",
    "igshid",
    "li_fat_id",
    "mc_cid",
    "mc_eid",
    "_ga",
    "_gl",
    "mkt_tok",
    "oly_anon_id",
    "oly_enc_id",
    "vero_id",
    "_hsenc",
    "_hsmi",
)

# RFC 3986 section 6.2.3: a port equal to the scheme's default is removed.
_DEFAULT_PORTS = {"http": 80, "https": 443}
# RFC 3986 section 2.3: unreserved characters; their percent-encodings are decoded (6.2.2.2).
_UNRESERVED = frozenset("ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789-._~")
# RFC 3986 appendix B: scheme, authority, path, query (the fragment is dropped).
_URI = re.compile(r"^(?:([A-Za-z][A-Za-z0-9+.-]*):)?(?://([^/?#]*))?([^?#]*)(?:\?([^#]*))?")
# RFC 3986 section 3.2: [userinfo@]host[:port]; an IPv6 literal is in brackets.
_AUTHORITY = re.compile(r"^([^@]*@)?(\[[^\]]*\]|[^:]*)(?::([^:]*))?$")
_PERCENT = re.compile(r"%([0-9A-Fa-f]{2})")


def canonical_url(url: str, tracking_params: Iterable[str] | None = None) -> str:
    """Return the canonical form of an absolute URL, for de-duplication.

    Lower-cases scheme and host; drops a leading ``www.``, a default port
    (80 for http, 443 for https) and the fragment; keeps user information;
    normalises percent-encodings and dot segments (RFC 3986, section 6.2.2);
    drops query parameters named in ``tracking_params`` (default
    :data:`TRACKING_PARAMS`; shell patterns such as ``"utm_*"``), sorts the
    remaining parameters, and drops trailing slashes from the path.

    Parameters
    ----------
    url : str
        An absolute URL such as ``"HTTPS://www.Example.org:443/a/?b=2&a=1#top"``.
    tracking_params : iterable of str, optional
        Parameter-name patterns to drop. Pass ``TRACKING_PARAMS + ("ref",)`` to
        extend the default list, or ``()`` to keep every parameter.

    Returns
    -------
    str
        For the example above, ``"https://example.org/a?a=1&b=2"``.

    Raises
    ------
    InputError
        When ``url`` is not a string or has no scheme and host.
    """
    if not isinstance(url, str):
        msg = f"canonical_url expects a URL string. Got {url!r} ({type(url).__name__}) instead."
        raise InputError(msg)
    return _canonical(url, tracking_matcher(tracking_params))


def canonical_urls(urls: pd.Series, tracking_params: Iterable[str] | None = None) -> pd.Series:
    """:func:`canonical_url` of each value (each distinct URL once); missing where unusable."""
    is_tracking = tracking_matcher(tracking_params)
    canon = {}
    for url in urls.dropna().unique():
        try:
            canon[url] = _canonical(url, is_tracking)
        except InputError:
            canon[url] = None
    return urls.map(canon).astype("str")


def tracking_matcher(tracking_params: Iterable[str] | None = None):
    """A function telling whether a lower-cased parameter name is a tracking parameter."""
    return _matcher(tuple(TRACKING_PARAMS if tracking_params is None else tracking_params))


@functools.lru_cache(maxsize=16)
def _matcher(patterns: tuple[str, ...]):
    if not patterns:
        return lambda name: None
    return re.compile("|".join(fnmatch.translate(p.lower()) for p in patterns)).match


def _canonical(url: str, is_tracking) -> str:
    match = _URI.match(url.strip())
    authority = _AUTHORITY.match(match.group(2) or "")
    if match.group(1) and match.group(2) and not authority:
        msg = f"Cannot read {url!r} as a URL (host {match.group(2)!r}). Give an absolute URL like 'https://host/path'."
        raise InputError(msg)
    if not match.group(1) or not authority or not authority.group(2):
        msg = (
            f"Cannot canonicalise {url!r}: it has no scheme and host. "
            "Give an absolute URL like 'https://host/path'."
        )
        raise InputError(msg)
    scheme, _, path, query = match.groups()
    userinfo, host, port = authority.groups()
    if port and (not port.isdigit() or int(port) > 65535):
        msg = f"Cannot read {url!r} as a URL (port {port!r}). Give an absolute URL like 'https://host/path'."
        raise InputError(msg)
    scheme, host = scheme.lower(), _normalise_percent(host.lower())
    if host.startswith("www."):
        host = host[4:]
    if port and int(port) != _DEFAULT_PORTS.get(scheme):
        host = f"{host}:{int(port)}"
    netloc = f"{userinfo or ''}{host}"
    path = _remove_dot_segments(_normalise_percent(path)).rstrip("/")
    query = _clean_query(query or "", is_tracking)
    return f"{scheme}://{netloc}{path}" + (f"?{query}" if query else "")


def _normalise_percent(text: str) -> str:
    """Upper-case percent-encodings and decode unreserved characters (RFC 3986, 6.2.2.1-2)."""

    def fix(match: re.Match) -> str:
        char = chr(int(match.group(1), 16))
        return char if char in _UNRESERVED else f"%{match.group(1).upper()}"

    return _PERCENT.sub(fix, text)


def _remove_dot_segments(path: str) -> str:
    """Resolve ``.`` and ``..`` segments (RFC 3986, section 5.2.4)."""
    if "." not in path:
        return path
    out: list[str] = []
    segments = path.split("/")
    for i, segment in enumerate(segments):
        last = i == len(segments) - 1
        if segment == ".":
            if last:
                out.append("")
        elif segment == "..":
            if len(out) > 1:
                out.pop()
            if last:
                out.append("")
        else:
            out.append(segment)
    return "/".join(out)


def _clean_query(query: str, is_tracking) -> str:
    """Drop tracking parameters and empty pieces; sort the rest by decoded name and value."""
    kept = []
    for piece in query.split("&"):
        if not piece:
            continue
        piece = _normalise_percent(piece)
        name, _, value = piece.partition("=")
        name_text = unquote(name.replace("+", " "))
        if is_tracking(name_text.lower()):
            continue
        kept.append((name_text, unquote(value.replace("+", " ")), piece))
    kept.sort(key=lambda item: (item[0], item[1]))
    return "&".join(piece for _, _, piece in kept)
