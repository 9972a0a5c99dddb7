"""Tests for the Link header / link-format tokenizer.

Sources: RFC 8288 §3 (Link serialisation) and its §3.5 examples, RFC 8288 Appendix B (parsing
algorithm), RFC 6690 §2 (link-format grammar) and its §5 examples, RFC 7089 §2.2 and §5
(Memento relation types and TimeMaps), RFC 9110 §5.6.4 (quoted-string). The RFC examples are
quoted from memory, since the RFC text could not be read here; they may differ from the published
figures in layout but not, as far as remembered, in content. Every expected value is written out
by hand from the input.
"""

from __future__ import annotations

import time

from hypothesis import given, settings
from hypothesis import strategies as st

from harvester.fetch.linkformat import Link, parse_links

# -- RFC examples ----------------------------------------------------------------------------------


def test_rfc8288_example_with_title() -> None:
    # RFC 8288 §3.5, first example (from memory); the header value is folded over two lines.
    found = parse_links(
        '<http://example.com/TheBook/chapter2>; rel="previous";\n         title="previous chapter"'
    )
    assert found.problems == ()
    assert len(found.links) == 1
    link = found.links[0]
    assert link.target == "http://example.com/TheBook/chapter2"  # RFC 8288 §3.1
    assert link.rels == ("previous",)  # RFC 8288 §3.3
    assert link.param("title") == "previous chapter"  # RFC 8288 §3.4.1, quotes removed


def test_rfc8288_example_root_with_extension_relation() -> None:
    # RFC 8288 §3.5, second example (from memory): an extension relation type is a URI.
    found = parse_links('</>; rel="http://example.net/foo"')
    assert found.links[0].target == "/"
    assert found.links[0].rels == ("http://example.net/foo",)  # RFC 8288 §2.1.2


def test_rfc8288_example_anchor() -> None:
    # RFC 8288 §3.5, third example (from memory); §3.2: anchor sets the link context.
    link = parse_links('</terms>; rel="copyright"; anchor="#foo"').links[0]
    assert link.rels == ("copyright",)
    assert link.param("anchor") == "#foo"


def test_rfc8288_example_two_links_with_extended_titles() -> None:
    # RFC 8288 §3.5, fourth example (from memory): title* is kept as written (RFC 8187 not
    # decoded) and the comma between the two link-values separates them.
    found = parse_links(
        "</TheBook/chapter2>;\n"
        "         rel=\"previous\"; title*=UTF-8'de'letztes%20Kapitel,\n"
        "         </TheBook/chapter4>;\n"
        "         rel=\"next\"; title*=UTF-8'de'n%c3%a4chstes%20Kapitel"
    )
    assert found.problems == ()
    assert [link.target for link in found.links] == ["/TheBook/chapter2", "/TheBook/chapter4"]
    assert [link.rels for link in found.links] == [("previous",), ("next",)]
    assert found.links[0].param("title*") == "UTF-8'de'letztes%20Kapitel"
    assert found.links[1].param("TITLE*") == "UTF-8'de'n%c3%a4chstes%20Kapitel"


def test_rfc8288_example_several_relation_types() -> None:
    # RFC 8288 §3.5, fifth example (from memory); §3.3: rel may hold several types.
    link = parse_links('<http://example.org/>;\n rel="start http://example.net/relation/other"')
    assert link.links[0].rels == ("start", "http://example.net/relation/other")


def test_rfc8288_example_two_links_on_one_line() -> None:
    # RFC 8288 §3.5, last example (from memory).
    found = parse_links(
        '<https://example.org/>; rel="start", <https://example.org/index>; rel="index"'
    )
    assert [(link.target, link.rels) for link in found.links] == [
        ("https://example.org/", ("start",)),
        ("https://example.org/index", ("index",)),
    ]


def test_rfc6690_well_known_core_answer() -> None:
    # RFC 6690 §5, first example (from memory): the answer to GET /.well-known/core.
    found = parse_links('</sensors/temp>;if="sensor",\n</sensors/light>;if="sensor"')
    assert found.problems == ()
    assert [link.target for link in found.links] == ["/sensors/temp", "/sensors/light"]
    assert all(link.param("if") == "sensor" for link in found.links)
    assert all(link.rels == () for link in found.links)  # no rel parameter at all


def test_rfc6690_unquoted_content_type_and_anchors() -> None:
    # RFC 6690 §5, the larger example (from memory): ct=40 is a ptoken, not quoted (§2);
    # anchor gives another context (§2.2).
    found = parse_links(
        '</sensors>;ct=40;title="Sensor Index",\n'
        '</sensors/temp>;rt="temperature-c";if="sensor",\n'
        '</sensors/light>;rt="light-lux";if="sensor",\n'
        '<http://www.example.com/sensors/t123>;anchor="/sensors/temp"\n'
        ';rel="describedby",\n'
        '</t>;anchor="/sensors/temp";rel="alternate"'
    )
    assert found.problems == ()
    assert len(found.links) == 5
    assert found.links[0].param("ct") == "40"
    assert found.links[0].param("title") == "Sensor Index"
    assert found.links[2].param("rt") == "light-lux"
    assert found.links[3].target == "http://www.example.com/sensors/t123"
    assert found.links[3].rels == ("describedby",)
    assert found.links[4].param("anchor") == "/sensors/temp"
    assert found.links[4].rels == ("alternate",)


def test_rfc7089_timemap_entries_keep_quoted_datetimes_whole() -> None:
    # RFC 7089 §5 TimeMap style (REFERENCES §4.4's made-up hosts): the quoted datetime holds a
    # comma, which must not split the link-value (RFC 8288 §3, quoted-string).
    found = parse_links(
        "<https://archive.example.net/m/20230520121005/https://stats.example.org/t.html>\n"
        '  ; rel="memento"; datetime="Sat, 20 May 2023 12:10:05 GMT",\n'
        "<https://archive.example.net/m/20240614174012/https://stats.example.org/t.html>\n"
        '  ; rel="last memento"; datetime="Fri, 14 Jun 2024 17:40:12 GMT"\n'
    )
    assert found.problems == ()
    assert [link.param("datetime") for link in found.links] == [
        "Sat, 20 May 2023 12:10:05 GMT",
        "Fri, 14 Jun 2024 17:40:12 GMT",
    ]
    assert found.links[1].rels == ("last", "memento")  # RFC 7089 §2.2: shared rel


# -- the grammar's corners -------------------------------------------------------------------------


def test_empty_and_blank_input_give_nothing() -> None:
    # RFC 6690 §2: link-value-list = [ link-value *[ "," link-value ] ] — the list may be empty.
    assert parse_links("") == parse_links(" \n\t ") == parse_links("", base="http://h.test/")
    assert parse_links("").links == () and parse_links("").problems == ()


def test_trailing_and_doubled_commas_are_empty_elements() -> None:
    # RFC 9110 §5.6.1: recipients accept empty list elements, so ",," and a trailing "," pass.
    found = parse_links("<a>,, ,<b>,\n")
    assert [link.target for link in found.links] == ["a", "b"]
    assert found.problems == ()


def test_commas_and_semicolons_inside_quotes_and_brackets() -> None:
    # RFC 8288 §3: a quoted-string may hold "," and ";"; a URI-Reference may hold "," and ";"
    # (RFC 3986 §2.2 sub-delims), and both sit inside delimiters the tokenizer respects.
    found = parse_links('<http://h.test/a,b;c>; title="x, y; z"; rel=next')
    assert found.problems == ()
    assert found.links[0].target == "http://h.test/a,b;c"
    assert found.links[0].param("title") == "x, y; z"
    assert found.links[0].rels == ("next",)


def test_whitespace_and_newlines_anywhere_between_tokens() -> None:
    # RFC 8288 §3: OWS around ";" and BWS around "="; line breaks as in folded headers and
    # RFC 7089 §5's TimeMap layout.
    found = parse_links(
        '\n  < http://h.test/x >\n ;\n rel \n = \n "memento"\n ;\tdatetime = x\n,\n'
    )
    assert found.problems == ()
    assert found.links[0].target == "http://h.test/x"  # space inside <> is trimmed (leniency)
    assert found.links[0].rels == ("memento",)
    assert found.links[0].param("datetime") == "x"


def test_uppercase_names_and_relation_types_are_folded() -> None:
    # RFC 8288 §2.1.1: registered relation types compare case-insensitively; Appendix B.3
    # lower-cases parameter names.
    link = parse_links('<http://h.test/m>; REL="Memento"; DateTime="d"').links[0]
    assert link.rels == ("memento",)
    assert link.params == {"rel": "Memento", "datetime": "d"}  # values are not folded
    assert link.param("DATETIME") == "d"


def test_unquoted_token_value() -> None:
    # RFC 8288 §3: link-param = token BWS [ "=" BWS ( token / quoted-string ) ].
    assert parse_links("<m>;rel=memento").links[0].rels == ("memento",)


def test_first_occurrence_of_a_parameter_wins() -> None:
    # RFC 8288 §3.3: occurrences of rel after the first MUST be ignored; the same rule is applied
    # to every parameter (a project choice, following Appendix B.2's handling of anchor).
    link = parse_links('<m>; rel="memento"; rel="original"; title=a; TITLE=b').links[0]
    assert link.rels == ("memento",)
    assert link.param("title") == "a"


def test_parameter_without_value_is_empty() -> None:
    # RFC 8288 §3: the "=" part of a link-param is optional.
    link = parse_links("<m>; crossorigin; rel=x; hint=").links[0]
    assert link.params == {"crossorigin": "", "rel": "x", "hint": ""}


def test_quoted_pairs_are_unescaped() -> None:
    # RFC 9110 §5.6.4: quoted-pair = "\" ( HTAB / SP / VCHAR / obs-text ).
    link = parse_links(r'<m>; title="say \"hi\" \\ bye"').links[0]
    assert link.param("title") == 'say "hi" \\ bye'


def test_several_relation_types_split_on_any_whitespace() -> None:
    # RFC 8288 §3.3 relation-types, RFC 7089 §2.2 "first memento".
    link = parse_links('<m>; rel="First  \tMEMENTO"').links[0]
    assert link.rels == ("first", "memento")


def test_relative_targets_resolve_against_base() -> None:
    # RFC 8288 §3.1 and RFC 3986 §5.2: relative references are resolved; anchors stay as written.
    found = parse_links(
        '</m/1>; rel=memento, <2>; anchor="/x", <https://o.test/>', base="https://a.test/tm/page"
    )
    assert [link.target for link in found.links] == [
        "https://a.test/m/1",
        "https://a.test/tm/2",
        "https://o.test/",
    ]
    assert found.links[1].param("anchor") == "/x"


def test_without_base_targets_stay_as_written() -> None:
    assert parse_links("</m/1>").links[0].target == "/m/1"  # RFC 8288 §3.1, nothing to resolve


def test_a_link_is_a_frozen_hashable_value() -> None:
    # common practice, no published source: links are values that can go in sets.
    one = parse_links("<m>; rel=a").links[0]
    again = parse_links("<m> ;rel=a").links[0]
    assert one == again and hash(one) == hash(again)
    assert one == Link(target="m", rels=("a",), params={"rel": "a"})


# -- recovery from broken text ---------------------------------------------------------------------


def test_garbage_between_link_values_is_skipped_and_reported() -> None:
    # RFC 6690 §2: anything but "<" cannot start a link-value; reading resumes at the next "<".
    found = parse_links('<a>, junk "with <b> inside" more, <c>; rel=x')
    assert [link.target for link in found.links] == ["a", "c"]  # the <b> inside quotes is junk
    assert found.problems == ("link 2: expected '<', found 'j'",)


def test_missing_closing_bracket_skips_to_the_next_link_value() -> None:
    # RFC 8288 §3: link-value = "<" URI-Reference ">" …; a URI-Reference holds no "<" (RFC 3986).
    found = parse_links("<a>, <http://h.test/b; rel=x, <c>")
    assert [link.target for link in found.links] == ["a", "c"]
    assert found.problems == ("link 2: no closing '>'",)


def test_unterminated_bracket_at_the_end() -> None:
    found = parse_links("<a>, <http://h.test/b")
    assert [link.target for link in found.links] == ["a"]
    assert found.problems == ("link 2: no closing '>'",)  # RFC 8288 §3


def test_unterminated_quote_ends_the_reading() -> None:
    # RFC 9110 §5.6.4: a quoted-string runs to its closing DQUOTE, so the rest is inside it.
    found = parse_links('<a>, <b>; title="never closed, <c>; rel=x')
    assert [link.target for link in found.links] == ["a"]
    assert found.problems == (
        "link 2: unterminated quoted string; the rest of the text was ignored",
    )


def test_text_after_parameters_without_a_comma() -> None:
    # RFC 8288 §3: after a link-param only ";" or "," may follow.
    found = parse_links("<a>; rel=x y, <b>")
    assert [link.target for link in found.links] == ["b"]
    assert found.problems == ("link 1: unexpected 'y' after the parameters",)


def test_parameter_without_a_name() -> None:
    # RFC 8288 §3: a link-param starts with a token.
    found = parse_links('<a>; ="x", <b>')
    assert [link.target for link in found.links] == ["b"]
    assert found.problems == ("link 1: parameter name expected, found '='",)


def test_stray_semicolons_are_ignored() -> None:
    # Leniency (common practice, no published source): ";;" and a final ";" carry nothing.
    found = parse_links("<a>;; rel=x;, <b>;")
    assert [link.rels for link in found.links] == [("x",), ()]
    assert found.problems == ()


def test_target_unresolvable_against_base_is_skipped() -> None:
    # RFC 3986 §3.2.2: an IP-literal needs its closing "]"; urllib refuses to resolve it.
    found = parse_links("<http://[::1/x>, <y>", base="http://h.test/")
    assert [link.target for link in found.links] == ["http://h.test/y"]
    assert found.problems == ("link 1: target 'http://[::1/x' cannot be resolved against the base",)


def test_problems_number_every_list_element_tried() -> None:
    found = parse_links('x, <a, <b>; q="', base=None)
    assert found.links == ()
    assert found.problems == (
        "link 1: expected '<', found 'x'",
        "link 2: no closing '>'",
        "link 3: unterminated quoted string; the rest of the text was ignored",
    )


# -- properties ------------------------------------------------------------------------------------

_PIECES = st.sampled_from(
    ["<", ">", '"', "\\", ",", ";", "=", " ", "\n", "rel", "a", "é", "[", "<a>"]
)


@given(st.text(), st.none() | st.just("http://h.test/dir/") | st.text())
@settings(max_examples=300)
def test_never_raises_on_any_text(text: str, base: str | None) -> None:
    found = parse_links(text, base=base)
    assert isinstance(found.links, tuple) and isinstance(found.problems, tuple)


@given(st.lists(_PIECES, max_size=40).map("".join), st.sampled_from([None, "http://h.test/", "x:"]))
@settings(max_examples=500)
def test_never_raises_on_delimiter_soup(text: str, base: str | None) -> None:
    found = parse_links(text, base=base)
    # Each list element ends as a link or a problem, never both, so neither can outnumber "<"s
    # plus the elements that start with something else.
    assert len(found.links) <= text.count("<")


def test_linear_time_on_adversarial_input() -> None:
    # Inputs that make a rescanning reader quadratic: many "<" without ">", quotes that open
    # after a broken link-value, long garbage; 200,000 characters each. A quadratic reader needs
    # minutes here, this one well under a second (common practice, no published source).
    texts = ("<" * 200_000, "<a" * 100_000, '<a>; t=a "' * 20_000, "x," * 100_000)
    for text in texts:
        started = time.perf_counter()
        parse_links(text)
        assert time.perf_counter() - started < 5.0
