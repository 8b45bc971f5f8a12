"""A strict walk over report HTML: balanced tags, attributes, ids and page text."""

from __future__ import annotations

from dataclasses import dataclass, field
from html.parser import HTMLParser

# HTML void elements (WHATWG HTML, "void elements"): they never have an end tag.
VOID = {"area", "base", "br", "col", "embed", "hr", "img", "input", "link", "meta", "source", "track", "wbr"}


@dataclass
class Walk:
    """What the strict walk saw: problems, every start tag with its attributes, and the text."""

    problems: list[str] = field(default_factory=list)
    tags: list[tuple[str, dict[str, str | None]]] = field(default_factory=list)
    text: list[str] = field(default_factory=list)
    ids: list[str] = field(default_factory=list)

    def of(self, name: str) -> list[dict[str, str | None]]:
        return [attrs for tag, attrs in self.tags if tag == name]

    @property
    def plain(self) -> str:
        return " ".join(" ".join(self.text).split())


class StrictWalker(HTMLParser):
    """Balanced tags or a problem: every element closed, in order, nothing left open."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.walk = Walk()
        self.stack: list[tuple[str, tuple[int, int]]] = []

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        self._record(tag, attrs)
        if tag not in VOID:
            self.stack.append((tag, self.getpos()))

    def handle_startendtag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        self._record(tag, attrs)  # <path .../> inside SVG: complete in itself

    def handle_endtag(self, tag: str) -> None:
        if tag in VOID:
            self.walk.problems.append(f"end tag of void element </{tag}> at {self.getpos()}")
        elif not self.stack or self.stack[-1][0] != tag:
            open_tag = self.stack[-1] if self.stack else None
            self.walk.problems.append(f"</{tag}> at {self.getpos()} closes {open_tag}")
        else:
            self.stack.pop()

    def handle_data(self, data: str) -> None:
        if not (self.stack and self.stack[-1][0] == "style"):  # the stylesheet is not page text
            self.walk.text.append(data)

    def _record(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        mapping = dict(attrs)
        if len(mapping) != len(attrs):
            self.walk.problems.append(f"duplicate attribute in <{tag}> at {self.getpos()}")
        if mapping.get("id"):
            self.walk.ids.append(str(mapping["id"]))
        self.walk.tags.append((tag, mapping))

    def finish(self) -> Walk:
        self.close()
        self.walk.problems += [f"<{tag}> opened at {pos} never closed" for tag, pos in self.stack]
        return self.walk


def strict_walk(html: str) -> Walk:
    walker = StrictWalker()
    walker.feed(html)
    return walker.finish()
