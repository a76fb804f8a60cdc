"""Read tables and attributes out of server-rendered HTML with the standard library's parser."""

from __future__ import annotations

from dataclasses import dataclass, field
from html.parser import HTMLParser


@dataclass
class Cell:
    tag: str  # "th" or "td"
    attrs: dict[str, str | None]
    text: str = ""


@dataclass
class Table:
    attrs: dict[str, str | None]
    caption: str = ""
    rows: list[tuple[dict[str, str | None], list[Cell]]] = field(default_factory=list)

    def body_rows(self) -> list[tuple[dict[str, str | None], list[Cell]]]:
        """Rows below the header row (a header row holds only th cells with scope="col")."""
        return [(a, cells) for a, cells in self.rows if not all(c.attrs.get("scope") == "col" for c in cells)]

    def headers(self) -> list[str]:
        return [c.text for a, cells in self.rows for c in cells if c.attrs.get("scope") == "col"]


class _Parser(HTMLParser):
    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.tables: list[Table] = []
        self.elements: list[tuple[str, dict[str, str | None]]] = []
        self._cell: Cell | None = None
        self._in_caption = False

    def handle_starttag(self, tag, attrs):
        attributes = dict(attrs)
        self.elements.append((tag, attributes))
        if tag == "table":
            self.tables.append(Table(attributes))
        elif tag == "tr" and self.tables:
            self.tables[-1].rows.append((attributes, []))
        elif tag in {"th", "td"} and self.tables and self.tables[-1].rows:
            self._cell = Cell(tag, attributes)
            self.tables[-1].rows[-1][1].append(self._cell)
        elif tag == "caption":
            self._in_caption = True

    def handle_endtag(self, tag):
        if tag in {"th", "td"} and self._cell is not None:
            self._cell.text = " ".join(self._cell.text.split())
            self._cell = None
        elif tag == "caption":
            self._in_caption = False

    def handle_data(self, data):
        if self._cell is not None:
            self._cell.text += data
        elif self._in_caption and self.tables:
            self.tables[-1].caption += data


def parse(html: str) -> _Parser:
    parser = _Parser()
    parser.feed(html)
    parser.close()
    return parser


def table_by_id(html: str, ident: str) -> Table:
    for table in parse(html).tables:
        if table.attrs.get("id") == ident:
            return table
    raise AssertionError(f"no table with id {ident!r}")


def elements(html: str, tag: str) -> list[dict[str, str | None]]:
    return [attrs for name, attrs in parse(html).elements if name == tag]
