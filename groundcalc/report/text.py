"""User text (project names, labels, sheet names) as report markup: printed as typed.

The report's base font (Helvetica) holds the Windows-1252 characters only.
Other scripts are printed in a font that has them: Cyrillic, Greek and most
other alphabets in DejaVu Sans when the system has it, Chinese, Japanese and
Korean in the Adobe CID fonts that PDF readers supply. A character no
available font holds is printed as ``?`` and counted, so the report can say
plainly that it could not be printed. Markup characters (``<``, ``&``) are
escaped, so ``<b>`` prints as typed.
"""

from __future__ import annotations

import unicodedata
from functools import lru_cache
from pathlib import Path
from xml.sax.saxutils import escape

__all__ = ["markup"]

#: Where DejaVu Sans is found on common systems.
_DEJAVU_PATHS = (
    "/usr/share/fonts/truetype/dejavu/DejaVuSans.ttf",
    "/usr/share/fonts/TTF/DejaVuSans.ttf",
    "/usr/share/fonts/dejavu/DejaVuSans.ttf",
    "/Library/Fonts/DejaVuSans.ttf",
    "C:/Windows/Fonts/DejaVuSans.ttf",
)


@lru_cache(maxsize=1)
def _dejavu() -> tuple[str, frozenset] | None:
    """Register DejaVu Sans if the system has it: (font name, code points it holds)."""
    from reportlab.pdfbase import pdfmetrics
    from reportlab.pdfbase.ttfonts import TTFont

    for p in _DEJAVU_PATHS:
        if Path(p).is_file():
            try:
                font = TTFont("GroundcalcDejaVuSans", p)
            except Exception:  # a damaged font file: try the next  # noqa: BLE001
                continue
            pdfmetrics.registerFont(font)
            return "GroundcalcDejaVuSans", frozenset(font.face.charToGlyph)
    return None


@lru_cache(maxsize=4)
def _cid(name: str) -> str:
    from reportlab.pdfbase import pdfmetrics
    from reportlab.pdfbase.cidfonts import UnicodeCIDFont

    pdfmetrics.registerFont(UnicodeCIDFont(name))
    return name


def _font_for(ch: str) -> str | None:
    """Font name for one character, ``""`` for the base font, ``None`` when none holds it."""
    try:
        ch.encode("cp1252")
        return ""
    except UnicodeEncodeError:
        pass
    cp = ord(ch)
    if 0x3040 <= cp <= 0x30FF:  # kana
        return _cid("HeiseiMin-W3")
    if 0xAC00 <= cp <= 0xD7AF or 0x1100 <= cp <= 0x11FF:  # Hangul
        return _cid("HYSMyeongJo-Medium")
    if 0x4E00 <= cp <= 0x9FFF or 0x3400 <= cp <= 0x4DBF or 0x3000 <= cp <= 0x303F or 0xFF00 <= cp <= 0xFFEF:
        return _cid("STSong-Light")
    dv = _dejavu()
    if dv is not None and cp in dv[1]:
        return dv[0]
    return None


def markup(text: str) -> tuple[str, int]:
    """Paragraph markup printing ``text`` as typed, and the count of characters it cannot print."""
    out: list[str] = []
    missing = 0
    run_font, run = "", []

    def flush() -> None:
        if run:
            body = escape("".join(run))
            out.append(f'<font name="{run_font}">{body}</font>' if run_font else body)
            run.clear()

    for ch in unicodedata.normalize("NFC", str(text)):
        font = _font_for(ch)
        if font is None:
            missing += 1
            ch, font = "?", ""
        if font != run_font:
            flush()
            run_font = font
        run.append(ch)
    flush()
    return "".join(out), missing
