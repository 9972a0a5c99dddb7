"""How harvester introduces itself to a site: an honest User-Agent and a way to reach its user.

RFC 9110 §10.1.5: ``User-Agent: harvester/<version> (+<contact>)`` — the product token first,
the contact in a comment. RFC 9309 §2.2.1: the token robots.txt groups are matched against is
a substring of that header. RFC 9110 §10.1.2: a robotic user agent SHOULD send ``From`` with
a mailbox, so an e-mail contact also goes there. There is no way to claim to be anything else.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

from harvester._version import __version__
from harvester.errors import FetchError

__all__ = ["AGENT_TOKEN", "CONTACT_HINT", "Identity", "check_contact"]

AGENT_TOKEN = "harvester"
_MAILBOX = re.compile(r"[^@\s<>()\[\],;:\"]+@[A-Za-z0-9.-]+\.[A-Za-z]{2,}")
_WEB = re.compile(r"https?://[^\s()]+")
CONTACT_HINT = 'write contact = "mailto:you@example.org" or "https://example.org/about"'


def check_contact(contact: str) -> tuple[str | None, str]:
    """The contact as it is sent, and '' — or None and the one-line problem with it.

    An e-mail address is sent as ``mailto:<address>`` whether or not it was written with
    ``mailto:``; a web contact is an http(s) URL. Every place that takes a contact (recipes,
    ``--contact``, the environment, the config file) checks it here, so all agree.
    """
    contact = contact.strip()
    address = contact.removeprefix("mailto:")
    if _MAILBOX.fullmatch(address):
        return f"mailto:{address}", ""
    if _WEB.fullmatch(contact):
        return contact, ""
    return None, f"contact {contact!r} is neither an e-mail address nor an http(s) URL"


@dataclass(frozen=True)
class Identity:
    """Who is fetching: the product token and the user's contact (URL or e-mail)."""

    contact: str
    token: str = AGENT_TOKEN

    @classmethod
    def from_contact(cls, contact: str | None, *, where: str = "") -> Identity:
        """An identity for ``contact``; refuses to go without one (live sites deserve a way to
        reach whoever is fetching)."""
        prefix = f"{where}: " if where else ""
        if not contact or not contact.strip():
            raise FetchError(
                f"{prefix}no contact given; harvester does not fetch from live sites anonymously",
                hint='set contact = "mailto:you@example.org" in the recipe, or pass --contact',
            )
        checked, problem = check_contact(contact)
        if checked is None:
            raise FetchError(f"{prefix}{problem}", hint=CONTACT_HINT)
        return cls(checked)

    @classmethod
    def without_contact(cls) -> Identity:
        """An identity with no contact, for a look-up that fetches no site's pages (a web
        archive's list of captures); the product token and version are still sent."""
        return cls("")

    @property
    def user_agent(self) -> str:
        """The User-Agent header value."""
        if not self.contact:
            return f"{self.token}/{__version__}"
        return f"{self.token}/{__version__} (+{self.contact})"

    def headers(self) -> dict[str, str]:
        """Request headers that identify us: User-Agent, and From for an e-mail contact."""
        fields = {"User-Agent": self.user_agent}
        if self.contact.startswith("mailto:"):
            fields["From"] = self.contact.removeprefix("mailto:")
        return fields
