"""Shared pieces of the report tests: a page's visible text and a PNG's size."""

from __future__ import annotations

import html as htmllib
import re

PNG_MAGIC = b"\x89PNG\r\n\x1a\n"


def visible_text(page: str) -> str:
    """Visible text of an HTML page, entities decoded, white space folded."""
    page = re.sub(r"<(style|script)[^>]*>.*?</\1>", " ", page, flags=re.S)
    return re.sub(r"\s+", " ", htmllib.unescape(re.sub(r"<[^>]+>", " ", page)))


def png_size(data: bytes) -> tuple[int, int]:
    """Width and height of a PNG: big-endian 32-bit at bytes 16-24 of its IHDR (ISO/IEC 15948)."""
    assert data[:8] == PNG_MAGIC
    return int.from_bytes(data[16:20], "big"), int.from_bytes(data[20:24], "big")
