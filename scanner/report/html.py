"""Building HTML safely: every value inserted is escaped unless it is already ``Markup``."""
from __future__ import annotations

import html

VOID_ELEMENTS = {"img", "meta", "br", "input"}


class Markup(str):
    """Text that is already HTML; everything else is escaped when inserted or added to it."""

    def __add__(self, other) -> "Markup":
        return Markup(str.__add__(self, esc(other)))

    def __radd__(self, other) -> "Markup":
        return Markup(str.__add__(esc(other), self))


def esc(value) -> Markup:
    return value if isinstance(value, Markup) else Markup(html.escape("" if value is None else str(value), quote=True))


def tag(element: str, content="", /, **attrs) -> Markup:
    """An element; attribute names ending in ``_`` lose it (``class_``), ``data_x`` becomes ``data-x``,
    ``None`` attributes are left out, ``True`` ones are written bare."""
    text = "".join(f' {k.rstrip("_").replace("_", "-")}' + ("" if v is True else f'="{esc(v)}"')
                   for k, v in attrs.items() if v is not None and v is not False)
    if element in VOID_ELEMENTS:
        return Markup(f"<{element}{text}/>")
    body = "".join(esc(c) for c in content) if isinstance(content, (list, tuple)) else esc(content)
    return Markup(f"<{element}{text}>{body}</{element}>")


def link(href: str, text) -> Markup:
    return tag("a", text, href=href)


def table(headers: list, rows: list[list], class_: str | None = None, numeric: set[int] = frozenset(),
          row_attrs: list[dict] | None = None) -> Markup:
    """A table; ``row_attrs`` gives each body row's attributes (``class_``, ``data_run``, ...)."""
    head = tag("thead", tag("tr", [tag("th", h, class_="num" if i in numeric else None) for i, h in enumerate(headers)]))
    row_attrs = row_attrs or [{}] * len(rows)
    body = tag("tbody", [tag("tr", [tag("td", c, class_="num" if i in numeric else None) for i, c in enumerate(row)],
                             **attrs) for row, attrs in zip(rows, row_attrs)])
    return tag("table", [head, body], class_=class_)


def facts(pairs: list[tuple[str, object]]) -> Markup:
    return tag("dl", [Markup(tag("dt", k) + tag("dd", v)) for k, v in pairs], class_="facts")


def badge(status: str) -> Markup:
    return tag("span", status, class_=f"badge st-{status}")


def num(value, digits: int = 3) -> str:
    if value is None:
        return "–"
    return f"{value:.{digits}g}" if isinstance(value, float) else str(value)


def two_line(main, sub) -> Markup:
    """A cell value with a second, smaller line under it."""
    return esc(main) + tag("br") + tag("span", sub, class_="sub")


def joined(items: list, sep: str) -> list:
    out: list = []
    for i, item in enumerate(items):
        out += ([sep] if i else []) + [item]
    return out


def lines(items: list[str]) -> Markup:
    """Text items each on its own line."""
    return Markup(tag("br").join(esc(i) for i in items))
