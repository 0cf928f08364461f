"""Small charts as inline SVG strings: no JavaScript, no network, every text escaped here.

Each chart function returns (svg, note): the note is one sentence saying how to read it.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from html import escape

INK, MUTED, GRID = "#1b2230", "#586174", "#d3d9e2"
TONES = {"base": "#2f6f86", "warn": "#b7791f", "bad": "#97290c", "ref": "#6a1240"}


@dataclass(frozen=True)
class Bar:
    label: str
    value: float
    tone: str = "base"
    title: str = ""


def _t(text: object) -> str:
    return escape(str(text), quote=True)


def _nice_max(v: float) -> float:
    if v <= 0:
        return 1.0
    for step in (1, 2, 5, 10, 20, 25, 50, 100, 200, 250, 500, 1000, 2000, 5000, 10000):
        if v <= step * 5:
            return float(step * 5) if v > step * 4 else float(step * (int(v / step) + 1))
    return float(v * 1.1)


def bar_chart(bars: Sequence[Bar], *, title: str, y_label: str, width: int = 620,
              height: int = 260, ref: tuple[float, str] | None = None) -> str:
    """Vertical bars; an optional horizontal reference line (value, label)."""
    left, right, top, bottom = 48, 12, 30, 46
    pw, ph = width - left - right, height - top - bottom
    top_value = max([b.value for b in bars] + [ref[0] if ref else 0])
    ymax = _nice_max(top_value)
    out = [f'<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 {width} {height}" '
           f'width="{width}" height="{height}" role="img" aria-label="{_t(title)}" '
           f'font-family="Segoe UI, Helvetica, Arial, sans-serif" font-size="11">',
           f"<title>{_t(title)}</title>",
           f'<text x="{left}" y="16" font-size="13" font-weight="600" fill="{INK}">'
           f"{_t(title)}</text>"]
    for i in range(5):
        v = ymax * i / 4
        y = top + ph - ph * i / 4
        out.append(f'<line x1="{left}" y1="{y:.1f}" x2="{left + pw}" y2="{y:.1f}" '
                   f'stroke="{GRID}" stroke-width="1"/>')
        out.append(f'<text x="{left - 6}" y="{y + 4:.1f}" text-anchor="end" fill="{MUTED}">'
                   f"{v:g}</text>")
    out.append(f'<text x="12" y="{top + ph / 2:.1f}" fill="{MUTED}" text-anchor="middle" '
               f'transform="rotate(-90 12 {top + ph / 2:.1f})">{_t(y_label)}</text>')
    n = max(1, len(bars))
    slot = pw / n
    bw = max(2.0, slot * 0.72)
    for i, b in enumerate(bars):
        h = ph * b.value / ymax if ymax else 0
        x = left + i * slot + (slot - bw) / 2
        y = top + ph - h
        tip = b.title or f"{b.label}: {b.value:g}"
        out.append(f'<rect x="{x:.1f}" y="{y:.1f}" width="{bw:.1f}" height="{h:.1f}" '
                   f'fill="{TONES.get(b.tone, TONES["base"])}"><title>{_t(tip)}</title></rect>')
        if b.value:
            out.append(f'<text x="{x + bw / 2:.1f}" y="{y - 3:.1f}" text-anchor="middle" '
                       f'fill="{INK}" font-size="10">{b.value:g}</text>')
        out.append(f'<text x="{x + bw / 2:.1f}" y="{top + ph + 14}" text-anchor="middle" '
                   f'fill="{MUTED}" font-size="10">{_t(b.label)}</text>')
    out.append(f'<line x1="{left}" y1="{top + ph}" x2="{left + pw}" y2="{top + ph}" '
               f'stroke="{INK}" stroke-width="1"/>')
    if ref is not None:
        y = top + ph - ph * ref[0] / ymax
        out.append(f'<line x1="{left}" y1="{y:.1f}" x2="{left + pw}" y2="{y:.1f}" '
                   f'stroke="{TONES["ref"]}" stroke-width="1.5" stroke-dasharray="5 4"/>')
        out.append(f'<text x="{left + pw}" y="{y - 4:.1f}" text-anchor="end" '
                   f'fill="{TONES["ref"]}">{_t(ref[1])}</text>')
    out.append("</svg>")
    return "".join(out)


def hbar_chart(bars: Sequence[Bar], *, title: str, x_label: str, width: int = 620,
               ref: tuple[float, str] | None = None) -> str:
    """Horizontal bars (long labels); an optional vertical reference line."""
    left, right, top, row = 230, 40, 30, 18
    height = top + row * max(1, len(bars)) + 40
    pw = width - left - right
    xmax = _nice_max(max([b.value for b in bars] + [ref[0] if ref else 0]))
    out = [f'<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 {width} {height}" '
           f'width="{width}" height="{height}" role="img" aria-label="{_t(title)}" '
           f'font-family="Segoe UI, Helvetica, Arial, sans-serif" font-size="11">',
           f"<title>{_t(title)}</title>",
           f'<text x="8" y="16" font-size="13" font-weight="600" fill="{INK}">{_t(title)}</text>']
    for i, b in enumerate(bars):
        y = top + i * row
        w = pw * b.value / xmax if xmax else 0
        label = b.label if len(b.label) <= 38 else b.label[:37] + "…"
        out.append(f'<text x="{left - 6}" y="{y + 12}" text-anchor="end" fill="{INK}">'
                   f"{_t(label)}</text>")
        out.append(f'<rect x="{left}" y="{y + 2}" width="{w:.1f}" height="{row - 5}" '
                   f'fill="{TONES.get(b.tone, TONES["base"])}"><title>'
                   f"{_t(b.title or f'{b.label}: {b.value:g}')}</title></rect>")
        out.append(f'<text x="{left + w + 4:.1f}" y="{y + 12}" fill="{INK}" font-size="10">'
                   f"{b.value:g}</text>")
    base = top + row * max(1, len(bars))
    out.append(f'<line x1="{left}" y1="{top}" x2="{left}" y2="{base}" stroke="{INK}"/>')
    out.append(f'<text x="{left + pw / 2:.1f}" y="{base + 28}" text-anchor="middle" '
               f'fill="{MUTED}">{_t(x_label)}</text>')
    if ref is not None:
        x = left + pw * ref[0] / xmax
        out.append(f'<line x1="{x:.1f}" y1="{top - 4}" x2="{x:.1f}" y2="{base}" '
                   f'stroke="{TONES["ref"]}" stroke-width="1.5" stroke-dasharray="5 4"/>')
        out.append(f'<text x="{x:.1f}" y="{base + 14}" text-anchor="middle" '
                   f'fill="{TONES["ref"]}">{_t(ref[1])}</text>')
    out.append("</svg>")
    return "".join(out)


def zs_ratio_chart(ratios: Sequence[float]) -> tuple[str, str]:
    """Measured Zs as a share of the tabulated maximum for the circuit's device."""
    edges = [i / 10 for i in range(11)]
    counts = [0] * 11
    for r in ratios:
        counts[min(10, int(r * 10)) if r < 1.0 else 10] += 1
    bars = []
    for i in range(10):
        tone = "warn" if edges[i] >= 0.8 else "base"
        bars.append(Bar(f"{int(edges[i] * 100)}–{int(edges[i + 1] * 100)}", counts[i], tone,
                        f"{counts[i]} circuits at {int(edges[i] * 100)}–"
                        f"{int(edges[i + 1] * 100)} % of the maximum"))
    bars.append(Bar("≥100", counts[10], "bad", f"{counts[10]} circuits at or over the maximum"))
    svg = bar_chart(bars, title="Measured Zs as % of the permitted maximum",
                    y_label="circuits")
    note = (f"{len(ratios)} circuits with a measured Zs and a tabulated maximum (BS 7671 "
            "Tables 41.2–41.4 for the recorded device). Bars at or over 100 % fail; a pile-up "
            "just under 100 %, or very low shares on long circuits, is worth a look.")
    return svg, note


def last_digit_chart(counts: Sequence[int]) -> tuple[str, str]:
    n = sum(counts)
    expected = n / 10 if n else 0
    bars = [Bar(str(d), c, "warn" if expected and c > 1.5 * expected else "base",
                f"last digit {d}: {c} readings") for d, c in enumerate(counts)]
    svg = bar_chart(bars, title="Last printed digit of every reading", y_label="readings",
                    ref=(expected, f"even share {expected:.0f}") if n else None)
    note = (f"{n} plain numeric readings. Measured values end in each digit about equally "
            "often; a tall 0 or 5 suggests readings were rounded or written without a "
            "meter.")
    return svg, note


def workload_chart(rows: Sequence[tuple[str, str, int]], limit: int, top: int = 20
                   ) -> tuple[str, str]:
    shown = list(rows)[:top]
    bars = [Bar(f"{who} · {day}", n, "bad" if n > limit else "base",
                f"{who} on {day}: {n} tested circuits") for who, day, n in shown]
    svg = hbar_chart(bars, title="Tested circuits per inspector per day",
                     x_label="tested circuits signed that day",
                     ref=(float(limit), f"plausible limit {limit}"))
    over = sum(1 for _, _, n in rows if n > limit)
    note = (f"The busiest {len(shown)} of {len(rows)} inspector-days; {over} over the "
            f"limit of {limit} circuits a day (see the workload check's options).")
    return svg, note
