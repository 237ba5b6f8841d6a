"""HTML rendering: valid, self-contained (no network), escaped, labelled, print-ready."""

from __future__ import annotations

import base64
import dataclasses
import re
from html.parser import HTMLParser

from hypothesis import given, settings
from hypothesis import strategies as st

from shufflecheck.common.quantity import exact
from shufflecheck.report.document import MethodNote, Section, Table, png_size
from shufflecheck.report.render.html import STYLESHEET, render_html
from tests.test_report_example import example_report

# HTML Living Standard, "void elements": these have no end tag.
VOID = {
    "area", "base", "br", "col", "embed", "hr", "img", "input", "link", "meta", "source",
    "track", "wbr",
}  # fmt: skip
# Elements that may not appear inside <p> (they would close it implicitly).
BLOCK = {
    "address", "article", "aside", "blockquote", "div", "dl", "figure", "footer", "form",
    "h1", "h2", "h3", "h4", "h5", "h6", "header", "hr", "main", "nav", "ol", "p", "pre",
    "section", "table", "ul",
}  # fmt: skip
URL_ATTRIBUTES = {"href", "src", "srcset", "action", "formaction", "poster", "data", "cite"}
FORBIDDEN = {"script", "link", "iframe", "object", "embed", "base", "frame", "applet"}


class Checker(HTMLParser):
    """Tag balance and structure, ids, links and images of one HTML document."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.stack: list[str] = []
        self.errors: list[str] = []
        self.doctype = 0
        self.counts: dict[str, int] = {}
        self.ids: list[str] = []
        self.links: list[str] = []
        self.images: list[dict[str, str]] = []
        self.url_values: list[str] = []
        # numeric cells: (column header has a label badge, cell has a badge)
        self._head_badges: list[bool] = []
        self._in_th = False
        self._in_td_num = False
        self._td_badge = False
        self._col = -1
        self.numeric_cells: list[tuple[bool, bool]] = []

    def handle_decl(self, decl: str) -> None:
        if decl.lower() == "doctype html":
            self.doctype += 1
        else:
            self.errors.append(f"unexpected declaration {decl}")

    def handle_starttag(self, tag, attrs):
        attributes = dict(attrs)
        self.counts[tag] = self.counts.get(tag, 0) + 1
        if tag in FORBIDDEN:
            self.errors.append(f"forbidden element <{tag}>")
        if tag in BLOCK and "p" in self.stack:
            self.errors.append(f"<{tag}> inside <p>")
        if "id" in attributes:
            self.ids.append(attributes["id"])
        for name, value in attributes.items():
            if name in URL_ATTRIBUTES or name.startswith("on") or name == "style":
                self.url_values.append(f"{name}={value}")
        if tag == "a":
            self.links.append(attributes.get("href", ""))
        if tag == "img":
            self.images.append(attributes)
        if tag == "tr":
            self._col = -1
            if self.stack and self.stack[-1] == "thead":
                self._head_badges = []
        if tag == "th":
            self._col += 1
            self._in_th = True
            self._head_badges.append(False)
        if tag == "td":
            self._col += 1
            self._in_td_num = "num" in attributes.get("class", "").split()
            self._td_badge = False
        if tag == "span" and "how" in attributes.get("class", "").split():
            if self._in_th:
                self._head_badges[-1] = True
            if self._in_td_num:
                self._td_badge = True
        if tag not in VOID:
            self.stack.append(tag)

    def handle_startendtag(self, tag, attrs):
        if tag not in VOID:
            self.errors.append(f"self-closing non-void <{tag}/>")
        self.handle_starttag(tag, attrs)
        if tag not in VOID:
            self.stack.pop()

    def handle_endtag(self, tag):
        if tag in VOID:
            self.errors.append(f"end tag for void element </{tag}>")
            return
        if not self.stack or self.stack[-1] != tag:
            self.errors.append(f"</{tag}> does not close <{self.stack[-1] if self.stack else ''}>")
            return
        self.stack.pop()
        if tag == "th":
            self._in_th = False
        if tag == "td" and self._in_td_num:
            header = self._head_badges[self._col] if self._col < len(self._head_badges) else False
            self.numeric_cells.append((header, self._td_badge))
            self._in_td_num = False


def check(html: str) -> Checker:
    checker = Checker()
    checker.feed(html)
    checker.close()
    return checker


def _without_data_uris(html: str) -> str:
    return re.sub(r"data:image/png;base64,[A-Za-z0-9+/=]+", "data:", html)


class TestValidity:
    def test_structure(self):
        html = render_html(example_report())
        checker = check(html)
        assert checker.errors == []
        assert checker.stack == []  # every element closed
        assert checker.doctype == 1 and html.startswith('<!DOCTYPE html>\n<html lang="en">')
        for tag in ("html", "head", "body", "title", "main", "style"):
            assert checker.counts.get(tag) == 1, tag
        assert checker.counts["h1"] == 1
        assert len(checker.ids) == len(set(checker.ids))  # ids unique
        assert '<meta charset="utf-8">' in html

    def test_internal_links_resolve(self):
        checker = check(render_html(example_report()))
        assert checker.links
        for href in checker.links:
            assert href.startswith("#") and href[1:] in checker.ids, href

    def test_checker_catches_broken_markup(self):
        assert check("<p><table></table></p>").errors
        assert check("<div><span></div>").errors
        assert check("<script></script>").errors


class TestSelfContained:
    def test_images_are_embedded_pngs(self):
        report = example_report()
        checker = check(render_html(report))
        assert len(checker.images) == 1
        image = checker.images[0]
        assert image["src"].startswith("data:image/png;base64,")
        png = base64.b64decode(image["src"].split(",", 1)[1], validate=True)
        figure = report.sections[0].figures[0]
        assert png == figure.png
        assert (int(image["width"]), int(image["height"])) == png_size(png)
        assert image["alt"] == figure.caption

    def test_no_network_reference_anywhere(self):
        html = render_html(example_report())
        checker = check(html)
        for value in checker.url_values:
            _, _, url = value.partition("=")
            assert url.startswith(("#", "data:image/png;base64,")), value
        text = _without_data_uris(html).lower()
        for needle in ("http:", "https:", "//", "url(", "@import", "ftp:", 'src="/'):
            assert needle not in text, needle

    def test_stylesheet_has_print_rules(self):
        assert "@media print" in STYLESHEET
        assert "break-before: page" in STYLESHEET  # methods start on a new page
        assert "break-inside: avoid" in STYLESHEET  # tables and figures kept whole
        assert "display: table-header-group" in STYLESHEET  # headers repeat on each page
        print_rules = STYLESHEET.split("@media print", 1)[1]
        assert "background: none" in print_rules


class TestContent:
    def test_answer_up_front_and_everything_present(self):
        report = example_report()
        html = render_html(report)
        positions = [
            html.index('id="question"'),
            html.index('id="answer"'),
            html.index('id="section-1"'),
            html.index('id="methods"'),
            html.index('id="reproducibility"'),
            html.index('id="cautions"'),
            html.index('id="sign-off"'),
        ]
        assert positions == sorted(positions)
        assert html.index("<h1>") < positions[0]
        for caution in report.all_cautions:
            assert caution.replace("'", "&#x27;") in html
        assert "<code>shufflecheck example</code>" in html
        assert "simulation = <code>2031</code>" in html
        assert "2031-04-02T18:05:00Z" in html

    def test_every_numeric_cell_is_labelled(self):
        checker = check(render_html(example_report()))
        assert len(checker.numeric_cells) >= 44
        for header_badge, cell_badge in checker.numeric_cells:
            assert header_badge != cell_badge  # exactly one of the two carries the label

    def test_text_is_escaped(self):
        hostile = '<script>alert("x")</script> & <img src=x onerror=y>'
        report = example_report(with_figure=False, title=hostile)
        report = dataclasses.replace(
            report,
            sections=(
                Section(
                    hostile,
                    paragraphs=(hostile,),
                    tables=(Table(hostile, (hostile,), [(hostile,)], notes=(hostile,)),),
                ),
            ),
            methods=(MethodNote(hostile, "exact", hostile, (hostile,)),),
            answer=(hostile,),
            question=hostile,
        )
        html = render_html(report)
        checker = check(html)
        assert checker.errors == []
        assert "script" not in checker.counts and checker.counts.get("img", 0) == 0
        assert "&lt;script&gt;alert(&quot;x&quot;)&lt;/script&gt; &amp; &lt;img" in html

    def test_characters_html_forbids_are_replaced(self):
        report = example_report(with_figure=False, title="a\x00b\x01c\x7fd\x9f")
        html = render_html(report)
        assert "<title>a\ufffdb\ufffdc\ufffdd\ufffd</title>" in html
        assert not re.search("[\x00-\x08\x0b\x0e-\x1f\x7f-\x9f]", html)

    @settings(max_examples=40, deadline=None)
    @given(st.text(min_size=1).filter(str.strip))
    def test_any_text_keeps_markup_valid(self, text):
        base = example_report(with_figure=False)
        report = dataclasses.replace(
            base,
            title=text,
            sections=(Section(text, paragraphs=(text,), tables=(Table(text, ("h",), [(text,)]),)),),
            methods=(MethodNote(text, "exact", text, (text,)),),
        )
        checker = check(render_html(report))
        assert checker.errors == [] and checker.stack == []

    def test_render_twice_identical(self):
        report = example_report()
        assert render_html(report) == render_html(report)

    def test_marked_row(self):
        html = render_html(example_report(with_figure=False))
        assert html.count('<tr class="marked">') == 1
        assert "Rows marked: the fewest riffles" in html

    def test_uniform_label_in_header(self):
        report = example_report(with_figure=False)
        table = Table("t", ("k", "tv"), [(exact(1), exact(0.5))])
        report = dataclasses.replace(report, sections=(Section("s", tables=(table,)),))
        html = render_html(report)
        assert (
            '<th scope="col" class="num">tv <span class="how how-exact">exact</span></th>' in html
        )
        assert '<td class="num">0.5000</td>' in html
