"""Page-address templates: the names they use, filling them in, and checking them on load.

Templates are ``str.format``-style strings naming only ``{site}`` and parameters; every value
but the site is percent-encoded when filled in. ``site_url`` checks the recipe's site.
"""

from __future__ import annotations

import string
from collections.abc import Mapping, Sequence
from urllib.parse import quote, urlsplit

from harvester.recipe.readers import Reader, Where, show, suggest, text

__all__ = ["expand_template", "site_url", "template_names", "template_reader"]

_Piece = tuple[str, str | None, str | None, str | None]  # string.Formatter().parse() items


def template_names(template: str) -> tuple[str, ...]:
    """The placeholder names in a template the loader accepted, in order."""
    return tuple(field for _, field, _, _ in string.Formatter().parse(template) if field)


def expand_template(template: str, values: Mapping[str, int | str], *, site: str = "") -> str:
    """Fill a template's placeholders; every value but ``site`` is percent-encoded whole.

    Encoding with ``safe=""`` turns ``/ ? # @ :`` into ``%XX``, so a value cannot add a path
    segment, a query or another host (RFC 3986 §2.1, §3.2); "." and ".." are refused on load.
    """
    parts: list[str] = []
    for literal, field, _, _ in string.Formatter().parse(template):
        parts.append(literal)
        if field == "site":
            parts.append(site)
        elif field:
            parts.append(quote(str(values[field]), safe=""))
    return "".join(parts)


def template_reader(known: Sequence[str], *, url: bool) -> Reader:
    """A reader for a template naming only ``known``; URL templates must fix scheme and host."""
    listed = ", ".join("{" + name + "}" for name in known) or "none"

    def read(value: object, where: Where) -> str:
        if not isinstance(value, str) or not value:
            example = '"{site}/seasons/{season}/players.html"' if url else '"{season}-06-30"'
            where.expected("non-empty text in quotes", value, example)
        try:
            pieces = list(string.Formatter().parse(value))
        except ValueError as exc:
            where.fail(f"is not a valid template: {exc}", "write {{ or }} for a literal brace")
        for _, field, spec, conversion in pieces:
            if field is not None and (spec or conversion or not field):
                where.fail(
                    f"has a placeholder that is not a plain {{name}}: {show(value)}",
                    f"placeholders here: {listed}",
                )
            if field is not None and field not in known:
                hint = f"{suggest(field, known)} placeholders here: {listed}".lstrip()
                where.fail(f"names unknown placeholder {{{field}}}", hint)
        if url:
            _check_url_shape(value, pieces, where)
        return value

    return read


def _authority_problem(url: str) -> tuple[str, str] | None:
    """What is wrong with a URL's scheme-and-host part, and what to do; None when nothing is.

    User info is refused outright: a name or password in a URL would be sent to the site
    (``Authorization``) and written into every row's provenance (RFC 3986 §3.2.1 deprecates
    "user:password" in URIs; RFC 9110 §4.2.4 says senders MUST NOT generate it for http(s)).
    """
    try:
        parts = urlsplit(url)
        port = parts.port  # reading .port is what checks it (RFC 3986 §3.2.3: digits)
    except ValueError as exc:
        return f"is not a URL Python can read ({exc})", "check the brackets and the port"
    if parts.username is not None or parts.password is not None:
        return (
            "holds a user name or password before the host; credentials are never sent",
            "remove the part up to and including @; harvester fetches only public pages",
        )
    if port is not None and not 0 < port < 65536:
        return f"has port {port}, outside 1–65535", "fix the port, or leave it out"
    return None


def _check_url_shape(template: str, pieces: list[_Piece], where: Where) -> None:
    """Refuse URL templates where a value could change the scheme, host or port."""
    example = 'write url = "{site}/seasons/{season}/players.html"'
    if any(char.isspace() for char in template):
        where.fail("contains a space or line break", "write %20 for a space inside a URL")
    fields = [field for _, field, _, _ in pieces]
    opens_with_site = pieces[0][0] == "" and fields[0] == "site"
    if "site" in fields[1 if opens_with_site else 0 :]:
        where.fail("may use {site} only at the very start", example)
    if opens_with_site:
        # "{site}.evil.example" or "{site}{port}" would move the request to another host.
        if len(pieces) > 1 and pieces[1][0][:1] not in ("/", "?", "#"):
            where.fail("needs a / right after {site}", example)
        return
    prefix = ""  # the text before the first placeholder must hold the whole scheme and host
    for literal, field, _, _ in pieces:
        prefix += literal
        if field is not None:
            break
    if not prefix.lower().startswith(("http://", "https://")):
        where.fail("must start with {site}/ or http:// or https://", example)
    if any(fields) and not any(mark in prefix.split("://", 1)[1] for mark in "/?#"):
        where.fail("has a placeholder in the host part", "put placeholders after the host's /")
    problem = _authority_problem(prefix)
    if problem is not None:
        where.fail(*problem)
    if not urlsplit(prefix).hostname:
        where.fail("has no host after ://", 'write url = "https://stats.example.org/{season}"')


def site_url(value: object, where: Where) -> str:
    """An http(s) URL with a host and no query, fragment or password; a final / is dropped."""
    example = '"https://stats.example.org"'
    site: str = text(example, required=True)(value, where)
    problem = _authority_problem(site)
    if problem is not None:
        where.fail(*problem)
    parts = urlsplit(site)
    usable = parts.scheme in ("http", "https") and parts.hostname
    if not usable or parts.query or parts.fragment or any(c.isspace() for c in site):
        where.expected("an http:// or https:// address (no user, query or #)", site, example)
    return site.rstrip("/")
