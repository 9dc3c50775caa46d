"""A small text extractor for the PDFs fpdf2 writes (test helper, not general purpose).

It reads every object, inflates FlateDecode streams, maps each font resource to
its ToUnicode CMap (bfchar and bfrange entries) and decodes the strings shown by
``Tj``/``TJ`` in page content streams. Fragments are joined by single spaces, so
tests compare text with white space collapsed.
"""

from __future__ import annotations

import re
import zlib

_TEXT_RE = re.compile(rb"/(F\d+) [\d.]+ Tf|(\((?:\\.|[^\\)])*\)) ?Tj|\[(.*?)\] ?TJ", re.S)
_OBJ_RE = re.compile(rb"(?:^|\n)(\d+) 0 obj\n")


def _objects(pdf: bytes) -> dict[int, tuple[bytes, bytes | None]]:
    """Map object number to (dictionary text, inflated stream or None)."""
    out = {}
    pos = 0
    while True:
        m = _OBJ_RE.search(pdf, pos)
        if not m:
            return out
        start = m.end()
        s = pdf.find(b"stream\n", start)
        e = pdf.find(b"endobj", start)
        if 0 <= s < e:
            head = pdf[start:s]
            length = int(re.search(rb"/Length (\d+)", head).group(1))
            raw = pdf[s + 7 : s + 7 + length]
            stream = zlib.decompress(raw) if b"/FlateDecode" in head else raw
            pos = s + 7 + length
            out[int(m.group(1))] = (head, stream)
        else:
            out[int(m.group(1))] = (pdf[start:e], None)
            pos = e
    return out


def _unescape(s: bytes) -> bytes:
    out = bytearray()
    i = 0
    while i < len(s):
        c = s[i]
        if c == 0x5C:  # backslash
            i += 1
            n = s[i : i + 1]
            if n in b"01234567":
                j = i
                while j < len(s) and j < i + 3 and s[j : j + 1] in b"01234567":
                    j += 1
                out.append(int(s[i:j], 8) & 0xFF)
                i = j
                continue
            out += {b"n": b"\n", b"r": b"\r", b"t": b"\t", b"b": b"\b", b"f": b"\f"}.get(n, n)
            i += 1
            continue
        out.append(c)
        i += 1
    return bytes(out)


def _cmap(stream: bytes) -> dict[int, str]:
    table: dict[int, str] = {}
    for block in re.findall(rb"beginbfchar(.*?)endbfchar", stream, re.S):
        for src, dst in re.findall(rb"<([0-9A-Fa-f]+)>\s*<([0-9A-Fa-f]+)>", block):
            table[int(src, 16)] = bytes.fromhex(dst.decode()).decode("utf-16-be")
    for block in re.findall(rb"beginbfrange(.*?)endbfrange", stream, re.S):
        for a, b, dst in re.findall(
            rb"<([0-9A-Fa-f]+)>\s*<([0-9A-Fa-f]+)>\s*<([0-9A-Fa-f]+)>", block
        ):
            start = int(dst, 16)
            for k, code in enumerate(range(int(a, 16), int(b, 16) + 1)):
                table[code] = chr(start + k)
    return table


def _strings(seg: bytes) -> list[bytes]:
    """Literal strings in a Tj operand or TJ array (balanced parentheses)."""
    found, depth, cur, i = [], 0, bytearray(), 0
    while i < len(seg):
        c = seg[i : i + 1]
        if depth and c == b"\\":
            cur += seg[i : i + 2]
            i += 2
            continue
        if c == b"(":
            if depth:
                cur += c
            depth += 1
        elif c == b")":
            depth -= 1
            if depth:
                cur += c
            else:
                found.append(_unescape(bytes(cur)))
                cur = bytearray()
        elif depth:
            cur += c
        i += 1
    return found


def pages_text(pdf: bytes) -> list[str]:
    """Return the text of each page, in page order."""
    objs = _objects(pdf)
    cmaps: dict[int, dict[int, str]] = {}
    for num, (body, _) in objs.items():
        m = re.search(rb"/ToUnicode (\d+) 0 R", body)
        if m:
            cmaps[num] = _cmap(objs[int(m.group(1))][1] or b"")
    # Page tree order: /Kids of the root /Pages object.
    tree = next(b for b, _ in objs.values() if re.search(rb"/Type /Pages\b", b))
    kids = re.search(rb"/Kids \[(.*?)\]", tree, re.S).group(1)
    page_nums = [int(x) for x in re.findall(rb"(\d+) 0 R", kids)]
    texts = []
    for pn in page_nums:
        body = objs[pn][0]
        res = body
        rm = re.search(rb"/Resources (\d+) 0 R", body)
        if rm:
            res = objs[int(rm.group(1))][0]
        fonts = {
            name: cmaps.get(int(ref), {}) for name, ref in re.findall(rb"/(F\d+) (\d+) 0 R", res)
        }
        content_ref = int(re.search(rb"/Contents (\d+) 0 R", body).group(1))
        stream = objs[content_ref][1] or b""
        frags, font = [], {}
        for m in re.finditer(
            rb"/(F\d+) [\d.]+ Tf|(\((?:\\.|[^\\)])*\)) ?Tj|\[(.*?)\] ?TJ", stream, re.S
        ):
            if m.group(1):
                font = fonts.get(m.group(1), {})
                continue
            raw = b"".join(_strings(m.group(2) or b"[" + m.group(3) + b"]"))
            codes = [int.from_bytes(raw[k : k + 2], "big") for k in range(0, len(raw) - 1, 2)]
            frags.append("".join(font.get(c, "\ufffd") for c in codes))
        texts.append(" ".join(frags))
    return texts


def squash(text: str) -> str:
    """Collapse runs of white space to one space."""
    return " ".join(text.split())
