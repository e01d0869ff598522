"""Escaping record text for Markdown pages that MkDocs turns into HTML.

Record text is untrusted: it may hold HTML, Markdown or template syntax. Every
value a template prints passes through `md_text` (the environment's finalize
hook) unless it is already `Markup` we built ourselves, so nothing in a record
can become a tag, a link, emphasis or a table cell break.
"""
from __future__ import annotations

import re
from typing import Any

from markupsafe import Markup

# HTML's special characters, and those Markdown or its extensions (tables, attr_list, tilde,
# caret) would act on, each written as a numeric entity that renders as the plain character.
# One pass over the text, so nothing is escaped twice.
_ESCAPES = str.maketrans({c: f"&#{ord(c)};" for c in "&<>\"'\\`*_{}[]#|~^"})


# What makes a line a block when it starts one (a list item, an admonition, a definition, a setext rule);
# `#` and `>` are escaped everywhere already.
_BLOCK_START = re.compile(r"^(\s*)(\d+(?=[.)])|)([.)!+=:\-])")


def md_text(value: Any) -> str:
    if isinstance(value, Markup):
        return str(value)
    if value is None:
        return ""
    text = re.sub(r"\s+", " ", str(value))  # one line: a newline would end a table row
    text = text.translate(_ESCAPES)
    # a value may start a line of the page (an address under a heading): never let it open a block
    return _BLOCK_START.sub(lambda m: f"{m.group(1)}{m.group(2) or ''}&#{ord(m.group(3))};", text, count=1)
