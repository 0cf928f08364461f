"""Damaged-stream detection (extractor/integrity.py) on streams built byte by byte: a flate
stream with an indirect /Length whose compressed bytes happen to end in a line-end byte is
intact (cairo and Ghostscript re-prints write such streams), a truncated one is damaged."""

from __future__ import annotations

import zlib

from certvet.extractor.integrity import damaged_streams


def _compressed_ending_in(last: bytes) -> bytes:
    for i in range(100_000):
        comp = zlib.compress(f"BT /F1 9 Tf 10 20 Td ({i}) Tj ET".encode() * 3)
        if comp.endswith(last):
            return comp
    raise AssertionError("no payload found")  # pragma: no cover


def _pdf(body: bytes) -> bytes:
    return (b"%PDF-1.4\n1 0 obj\n<< /Length 2 0 R /Filter /FlateDecode >>\nstream\n" + body
            + b"\nendstream\nendobj\n2 0 obj\n" + str(len(body)).encode() + b"\nendobj\n")


def test_flate_stream_ending_in_a_line_end_byte_is_intact() -> None:
    for last in (b"\n", b"\r"):
        comp = _compressed_ending_in(last)
        assert damaged_streams(_pdf(comp)) == 0, last


def test_truncated_flate_stream_is_damaged() -> None:
    comp = _compressed_ending_in(b"\n")
    assert damaged_streams(_pdf(comp[: len(comp) // 2])) == 1
