"""Reading an HTML report back with the standard library's parser, to prove what is and isn't in it."""

from __future__ import annotations

import re
from html.parser import HTMLParser

#: attributes that make a browser fetch something
_FETCHING = {"src", "href", "xlink:href", "data", "poster", "srcset", "action", "formaction"}


class Inventory(HTMLParser):
    """Every start tag, every fetching attribute and all text, as parsed by a browser-like tokenizer."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.tags: list[str] = []
        self.attributes: list[tuple[str, str, str]] = []
        self.text: list[str] = []
        self.ids: list[str] = []

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)
        for name, value in attrs:
            if name == "id":
                self.ids.append(value or "")
            if name.startswith("on"):
                self.attributes.append((tag, name, value or ""))
            if name in _FETCHING:
                self.attributes.append((tag, name, value or ""))

    handle_startendtag = handle_starttag

    def handle_data(self, data):
        self.text.append(data)


def inventory(page: str) -> Inventory:
    inv = Inventory()
    inv.feed(page)
    inv.close()
    return inv


def external_references(page: str) -> list[str]:
    """Anything that would make the browser reach the network or another file."""
    inv = inventory(page)
    found = [f"{t} {a}={v}" for t, a, v in inv.attributes if not v.startswith("#")]
    found += re.findall(r"https?://[^\s\"'<>)]+", page)
    found += re.findall(r"@import|url\((?!#)", page)
    return found
