"""Damaged streams in a PDF's bytes: a page whose content stream is damaged is drawn in part.

PDF libraries recover what they can from a damaged stream (a compressed stream whose data
fails its check, a stream whose /Length does not reach its `endstream`) and say nothing, so a
schedule page can lose its lower rows silently. `damaged_streams` finds such streams in the
raw bytes, cheaply (zlib runs in C): every stream whose dictionary asks for /FlateDecode must
inflate to its end, and a stream with a direct /Length must end where the length says. The
extractor records a problem when any is damaged, so the audit is incomplete, not clear.
Streams inside object streams, encrypted files and other filters are not examined.
"""

from __future__ import annotations

import base64
import binascii
import re
import zlib

_STREAM = re.compile(rb"stream(?:\r\n|\n|\r)")
_ENDSTREAM = b"endstream"
_LENGTH = re.compile(rb"/Length\s+(\d+)(?!\d)(?!\s+\d+\s+R)")
_DICT_WINDOW = 600  # bytes before `stream` searched for its dictionary
_FILTERS = re.compile(rb"/Filter\s*(\[[^\]]*\]|/[A-Za-z0-9]+)")
_DECODERS = {b"ASCII85Decode", b"FlateDecode"}


def _intact(body: bytes, filters: list[bytes]) -> bool:
    """Does the body decode to its end through these filters (ASCII85 and Flate only)?"""
    for name in filters:
        if name == b"ASCII85Decode":
            text = body.strip()
            if not text.endswith(b"~>"):
                return False
            try:
                body = base64.a85decode(text, adobe=True, ignorechars=b" \t\r\n\x0b\x0c")
            except (ValueError, binascii.Error):
                return False
        else:  # FlateDecode
            try:
                inflater = zlib.decompressobj()
                inflater.decompress(body)
            except zlib.error:
                return False
            if not inflater.eof:
                return False
            return True  # what follows a flate filter is not checked
    return True


def damaged_streams(data: bytes) -> int:
    """How many streams of this PDF are damaged (0 for an encrypted file: not examined)."""
    if b"/Encrypt" in data:
        return 0
    damaged = 0
    for m in _STREAM.finditer(data):
        start = m.end()
        if data[m.start() - 3 : m.start()] == b"end":  # the `stream` of an `endstream`
            continue
        head = data[max(0, m.start() - _DICT_WINDOW) : m.start()]
        opened = head.rfind(b"<<")
        if opened < 0 or head.rfind(b"obj") > opened:  # no dictionary of its own
            continue
        head = head[opened:]
        end = data.find(_ENDSTREAM, start)
        if end < 0:
            damaged += 1
            continue
        length = _LENGTH.search(head)
        if length is not None and not 0 <= end - (start + int(length.group(1))) <= 2:
            damaged += 1
            continue
        found = _FILTERS.search(head)
        if found is None or b"/DecodeParms" in head:
            continue
        filters = re.findall(rb"/([A-Za-z0-9]+)", found.group(1))
        if filters and all(f in _DECODERS for f in filters):
            body = data[start:end]
            if length is not None:
                body = body[: int(length.group(1))]
            if not _intact(body, filters):  # inflate stops at its end: the EOL is left over
                damaged += 1
    return damaged
