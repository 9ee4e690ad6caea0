"""Markdown narratives (scenario notes, the brief's front text) made safe for a page.

Python-Markdown has no safe mode, so safety comes from two layers:

1. the parsers for raw HTML are removed, so a ``<script>`` in a note stays
   text and is escaped on output;
2. the converted HTML is sanitised with nh3 against an allowlist of tags and
   attributes, with link targets limited to http(s), mailto and relative paths
   (``javascript:``, ``data:`` and ``vbscript:`` links lose their ``href``).

Either layer alone left attacks alive in our measurements; together they left
none. The result is marked safe for Jinja2 with :class:`markupsafe.Markup`, so
this module is the one place where narrative HTML is trusted.
"""

from __future__ import annotations

import html
import re

import markdown
import nh3
from markupsafe import Markup

ALLOWED_TAGS = frozenset(
    {
        "p", "br", "hr", "h2", "h3", "h4", "h5", "h6", "strong", "em", "b", "i",
        "code", "pre", "blockquote", "ul", "ol", "li", "a", "table", "thead",
        "tbody", "tr", "th", "td", "sup", "sub", "abbr",
    }
)  # fmt: skip
ALLOWED_ATTRIBUTES = {"a": {"href", "title"}, "abbr": {"title"}, "th": {"align"}, "td": {"align"}}
URL_SCHEMES = frozenset({"http", "https", "mailto"})
# A heading level 1 belongs to the page; narratives start at level 2.
_HEADING_SHIFT = re.compile(r"<(/?)h([1-5])\b")


class _NoRawHtml(markdown.Extension):
    """Removes the raw-HTML block and inline parsers: tags in the source stay text.

    The serialiser then escapes them like any other text, and code spans are
    escaped exactly once.
    """

    def extendMarkdown(self, md: markdown.Markdown) -> None:
        md.preprocessors.deregister("html_block")
        md.inlinePatterns.deregister("html")


def _shift_headings(text: str) -> str:
    return _HEADING_SHIFT.sub(lambda m: f"<{m.group(1)}h{int(m.group(2)) + 1}", text)


def narrative_html(source: str) -> Markup:
    """Markdown text -> sanitised HTML (headings shifted down one level)."""
    converter = markdown.Markdown(extensions=[_NoRawHtml(), "tables"], output_format="html")
    converted = _shift_headings(converter.convert(source))
    cleaned = nh3.clean(
        converted,
        tags=set(ALLOWED_TAGS),
        attributes={tag: set(names) for tag, names in ALLOWED_ATTRIBUTES.items()},
        url_schemes=set(URL_SCHEMES),
        link_rel="noopener noreferrer",
        strip_comments=True,
    )
    return Markup(cleaned)


def paragraphs_html(text: str) -> Markup:
    """Plain text (a scenario ``summary``) -> escaped paragraphs, split at blank lines."""
    blocks = [" ".join(block.split()) for block in re.split(r"\n\s*\n", text.strip())]
    return Markup("".join(f"<p>{html.escape(block)}</p>" for block in blocks if block))
