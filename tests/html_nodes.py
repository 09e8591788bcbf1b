"""A tiny element tree built with the standard library's html.parser, for report tests.

The report is checked by parsing its elements (house style), never by comparing bytes.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from html.parser import HTMLParser

VOID = {
    "area", "base", "br", "col", "embed", "hr", "img", "input", "link", "meta", "source",
    "track", "wbr",
}  # fmt: skip


@dataclass
class Node:
    tag: str
    attrs: dict[str, str | None]
    parent: Node | None = None
    children: list[Node] = field(default_factory=list)
    parts: list[str] = field(default_factory=list)

    @property
    def text(self) -> str:
        """All text inside the element, children included, whitespace collapsed."""
        out: list[str] = []
        self._collect(out)
        return " ".join("".join(out).split())

    def _collect(self, out: list[str]) -> None:
        out.extend(self.parts)
        for c in self.children:
            c._collect(out)

    def iter(self) -> list[Node]:
        found = [self]
        for c in self.children:
            found.extend(c.iter())
        return found

    def find_all(self, tag: str | None = None, **attrs: str) -> list[Node]:
        hits = []
        for n in self.iter():
            if tag is not None and n.tag != tag:
                continue
            if all(n.attrs.get(k.replace("_", "-")) == v for k, v in attrs.items()):
                hits.append(n)
        return hits

    def by_id(self, ident: str) -> Node:
        hits = [n for n in self.iter() if n.attrs.get("id") == ident]
        assert len(hits) == 1, f"expected one element with id={ident!r}, found {len(hits)}"
        return hits[0]


class _Builder(HTMLParser):
    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.root = Node("#document", {})
        self.cur = self.root

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        node = Node(tag, dict(attrs), self.cur)
        self.cur.children.append(node)
        if tag not in VOID:
            self.cur = node

    def handle_startendtag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        self.cur.children.append(Node(tag, dict(attrs), self.cur))

    def handle_endtag(self, tag: str) -> None:
        n: Node | None = self.cur
        while n is not None and n.tag != tag:
            n = n.parent
        if n is not None and n.parent is not None:
            self.cur = n.parent

    def handle_data(self, data: str) -> None:
        self.cur.parts.append(data)


def parse(html: str) -> Node:
    """Parse an HTML document into a :class:`Node` tree."""
    b = _Builder()
    b.feed(html)
    b.close()
    return b.root
