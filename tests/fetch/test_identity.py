"""How harvester identifies itself (RFC 9110 §10.1.5 User-Agent, §10.1.2 From)."""

from __future__ import annotations

import pytest

from harvester import __version__
from harvester.errors import FetchError
from harvester.fetch.identity import Identity


def test_user_agent_names_product_version_and_contact() -> None:
    identity = Identity.from_contact("mailto:analyst@example.org")
    # RFC 9110 §10.1.5: product "/" version, then a comment; RFC 9309 §2.2.1: the product token
    # robots.txt groups match is a substring of it.
    assert identity.user_agent == f"harvester/{__version__} (+mailto:analyst@example.org)"
    assert "harvester" in identity.user_agent


def test_an_email_contact_also_goes_into_from() -> None:
    # RFC 9110 §10.1.2: a robotic user agent SHOULD send From with a mailbox.
    headers = Identity.from_contact("analyst@example.org").headers()
    assert headers["From"] == "analyst@example.org"
    assert headers["User-Agent"].endswith("(+mailto:analyst@example.org)")


def test_a_web_contact_has_no_from() -> None:
    headers = Identity.from_contact("https://example.org/about").headers()
    assert "From" not in headers
    assert headers["User-Agent"].endswith("(+https://example.org/about)")


@pytest.mark.parametrize("contact", [None, "", "   "])
def test_no_contact_is_refused(contact: str | None) -> None:
    with pytest.raises(FetchError, match="anonymously") as caught:
        Identity.from_contact(contact, where="recipes/x.toml")
    assert "recipes/x.toml" in str(caught.value)
    assert "contact =" in caught.value.hint


@pytest.mark.parametrize("contact", ["nobody", "ftp://example.org", "mailto:", "a@b"])
def test_a_contact_that_reaches_no_one_is_refused(contact: str) -> None:
    with pytest.raises(FetchError, match="neither an e-mail address nor an http"):
        Identity.from_contact(contact)
