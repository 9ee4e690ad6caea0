"""Narratives and scenario text on pages cannot carry markup that runs.

The attack strings are the usual families (common practice, no source): script
elements, event-handler attributes, ``javascript:``/``data:``/``vbscript:`` URLs
in Markdown links and in raw HTML, SVG and MathML wrappers, HTML comments and
entity-encoded schemes. Each must come out as inert text or lose its link.
"""

from __future__ import annotations

import html5lib
import pytest

from sitegen.pages.markup import narrative_html, paragraphs_html
from sitegen.pages.render import content_security_policy, script_hash

ATTACKS = [
    "<script>alert(1)</script>",
    "<img src=x onerror=alert(1)>",
    "<svg onload=alert(1)></svg>",
    '<a href="javascript:alert(1)">x</a>',
    "[click](javascript:alert(1))",
    "[click](JaVaScRiPt:alert(1))",
    "[click](  javascript:alert(1))",
    "[click](&#106;avascript:alert(1))",
    "[click](data:text/html;base64,PHNjcmlwdD5hbGVydCgxKTwvc2NyaXB0Pg==)",
    "[click](vbscript:msgbox(1))",
    "![pic](javascript:alert(1))",
    '<iframe src="https://example.org"></iframe>',
    "<math><mi xlink:href=javascript:alert(1)>x</mi></math>",
    "<!-- <script>alert(1)</script> -->",
    '<div style="background:url(javascript:alert(1))">x</div>',
    "<<script>script>alert(1)<</script>/script>",
    "<details open ontoggle=alert(1)>",
    '[x](https://ok.example "title" onclick=alert(1))',
]


def _elements(fragment: str) -> list:
    """Every element of an HTML fragment, as html5lib parses it (as a browser would)."""
    tree = html5lib.parseFragment(fragment, treebuilder="etree", namespaceHTMLElements=False)
    return list(tree.iter())


@pytest.mark.parametrize("attack", ATTACKS)
def test_narrative_attack_is_inert(attack: str) -> None:
    out = str(narrative_html(attack))
    for element in _elements(out):
        tag = element.tag if isinstance(element.tag, str) else ""
        assert tag not in {"script", "iframe", "svg", "math", "img", "style", "details"}, out
        for name, value in element.attrib.items():
            assert not name.lower().startswith("on"), out
            assert name.lower() != "style", out
            if name.lower() in {"href", "src"}:
                assert value.split(":")[0].strip().lower() in {"http", "https", "mailto"} or (
                    ":" not in value
                ), out


def test_safe_markdown_still_renders() -> None:
    out = str(
        narrative_html(
            "# Title\n\nSome **bold** text with a [link](https://example.org) "
            "and [another page](coastal-sprat.html).\n\n> a quote\n\n- one\n- two"
        )
    )
    assert "<h2>Title</h2>" in out  # level 1 belongs to the page
    assert "<strong>bold</strong>" in out
    assert 'href="https://example.org"' in out and 'href="coastal-sprat.html"' in out
    assert "<blockquote>" in out and "<li>one</li>" in out


def test_code_is_escaped_once() -> None:
    assert "<code>a &lt; b &amp;&amp; c</code>" in str(narrative_html("`a < b && c`"))


def test_summary_paragraphs_escape_text() -> None:
    out = str(paragraphs_html("one <b>x</b>\nline\n\nsecond & last"))
    assert out == "<p>one &lt;b&gt;x&lt;/b&gt; line</p><p>second &amp; last</p>"


def test_csp_lists_exactly_the_hashes_of_the_page_scripts() -> None:
    # SHA-256 of "" is the published empty-input digest (FIPS 180-4 test value, from memory):
    # e3b0c442...b855, whose base64 form is 47DEQpj8HBSa+/TImW+5JCeuQeRkm5NMpJWZG3hSuFU=.
    assert script_hash("") == "'sha256-47DEQpj8HBSa+/TImW+5JCeuQeRkm5NMpJWZG3hSuFU='"
    policy = content_security_policy(("a()", "b()"))
    assert "default-src 'none'" in policy
    assert policy.count("'sha256-") == 2 and "'unsafe-inline'" not in policy.split("script-src")[1]
    assert "script-src 'none'" in content_security_policy(())
