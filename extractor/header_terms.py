"""The trade's words for each canonical field: column headers, board labels, certificate labels.

Used by `extractor.draft` to guess which column of an unfamiliar form holds which field.
Each term is a regular expression matched (re.search) against a header's text after
`normalise_header` (NFKC, spaces folded, "Ω"/"ohm" kept, case kept: the trade writes
"r1" for the end-to-end line reading and "R1+R2" / "R2" for the loop readings, so case matters
for those few terms; the rest carry `(?i)`).

A term has a score from 0 to 1: how sure a match makes us. A generic word ("Type") scores
low so that a more specific term of another field wins; `draft` reports close seconds as
ambiguities instead of choosing silently.

Two-level headers (a group cell such as "Insulation resistance" over "L-L" and "L-E") are
matched on "group | sub" text, so terms may mention either part.
"""

from __future__ import annotations

import re
import unicodedata
from dataclasses import dataclass


@dataclass(frozen=True)
class Term:
    field: str
    pattern: re.Pattern[str]
    score: float


def _t(field: str, score: float, *patterns: str) -> list[Term]:
    return [Term(field, re.compile(p), score) for p in patterns]


I = "(?i)"  # noqa: E741 - short prefix for case-insensitive terms

# --- circuit columns ------------------------------------------------------------------------
CIRCUIT_TERMS: list[Term] = [
    *_t(
        "circuit_ref",
        0.95,
        I + r"^(?:circuit|cct|ckt)\.?\s*(?:no\.?|number|ref\.?|#)?$",
        I + r"^(?:no\.?|#|ref\.?|way)$",
        I + r"\bcct\s*no\b",
        I + r"circuit\s*(?:no|number|ref)",
    ),
    *_t(
        "description",
        0.95,
        I + r"description",
        I + r"circuit\s+details",
        I + r"^details$",
        I + r"^(?:circuit\s+)?designation$",
    ),
    *_t(
        "wiring_type",
        0.9,
        I + r"type\s+of\s+wiring",
        I + r"wiring\s+(?:type|system|code)",
        I + r"cable\s+type",
    ),
    *_t(
        "ref_method",
        0.9,
        I + r"ref(?:erence|\.)?\s*method",
        I + r"installation\s+method",
        I + r"^method$",
    ),
    *_t("points", 0.9, I + r"points?\s+served", I + r"no\.?\s+of\s+points", I + r"^points$"),
    *_t(
        "live_csa",
        0.9,
        I + r"\blive\b.*(?:mm|csa)",
        I + r"(?:csa|conductors?|mm).*\|\s*live",
        I + r"^live\s*\(?mm",
        I + r"line\s+(?:conductor\s+)?(?:csa|mm)",
    ),
    *_t(
        "cpc_csa",
        0.9,
        I + r"\bcpc\b.*(?:mm|csa)",
        I + r"(?:csa|conductors?|mm).*\|\s*cpc",
        I + r"^cpc\s*\(?mm",
        I + r"(?:protective|earth)\s+conductor\s+(?:csa|mm)",
    ),
    *_t("live_csa", 0.85, I + r"^live\s*/\s*cpc"),
    *_t("cpc_csa", 0.85, I + r"^live\s*/\s*cpc"),
    *_t("live_csa", 0.4, I + r"^(?:csa|conductor\s+csa|cable\s+size)\b"),
    *_t(
        "max_disconnection_time",
        0.9,
        I + r"max(?:imum)?\.?\s+disc(?:onnection|\.)?\s+time",
        I + r"disconnection\s+time",
        I + r"^max\s+disc",
    ),
    *_t(
        "device_standard",
        0.9,
        I + r"\bBS\s*\(?\s*EN\s*\)?",
        I + r"^BS\s*(?:no|number)?$",
        I + r"device\s+standard",
        I + r"\|\s*BS\b",
    ),
    *_t(
        "device_type",
        0.55,
        I + r"(?:device|ocpd|protective|overcurrent|mcb|breaker).*\|\s*type\b",
        I + r"device\s+type",
        I + r"^(?:ocpd|mcb|breaker|overcurrent\s+device)\s+type\b",
        I + r"^type$",
        I + r"^curve$",
        I + r"type\s*\(?curve",
    ),
    *_t(
        "rating",
        0.9,
        I + r"\brating\b",
        I + r"^I\s*n\s*\(A\)",
        I + r"\bIn\s*\(A\)",
        I + r"\(A\)$",
        I + r"^amps$",
        I + r"\|\s*A$",
    ),
    *_t(
        "breaking_capacity",
        0.9,
        I + r"breaking\s+capacity",
        I + r"short[- ]circuit\s+capacity",
        I + r"^\(?kA\)?$",
        I + r"\|\s*kA$",
        I + r"capacity\s*\(?kA",
    ),
    *_t("rcd_type", 0.85, I + r"rcd.*\|\s*type\b", I + r"rcd\s+type", I + r"^rcd$"),
    # A2:2022 model schedule: the RCD's own standard and rating, under an "RCD" group or
    # printed as one label
    *_t(
        "rcd_standard",
        0.95,
        I + r"^rcd\b.*\|\s*BS\s*\(?\s*EN\s*\)?",
        I + r"^rcd\s+BS\s*\(?\s*EN",
        I + r"rcd\s+(?:standard|BS\s*(?:no|number))",
    ),
    *_t(
        "rcd_rating",
        0.95,
        I + r"^rcd\b.*\|\s*(?:rating|rated\s+current|I\s*n\s*\(A\))",
        I + r"^rcd\s+(?:rating|rated\s+current)\b(?!.*residual)",
    ),
    *_t(
        "rcd_idn",
        0.9,
        r"^(?!.*(?:\btime\b|\(ms\)|\bms\b)).*I\s*Δ\s*n",
        I + r"rcd.*(?:rated|operating)\s+(?:residual\s+)?current",
        I + r"\bI\s*dn\b",
        I + r"rcd.*\(mA\)$",
        I + r"rcd.*\|\s*mA$",
        I + r"residual\s+current",
    ),
    *_t(
        "max_zs",
        0.95,
        I + r"max(?:imum)?\.?\s*(?:permitted\s+|allowed\s+)?Zs",
        I + r"Zs\s*max",
        I + r"permitted\s+Zs",
        I + r"max(?:imum)?.*\|\s*Zs",
    ),
    *_t(
        "r1",
        0.95,
        r"^r\s*1\b(?!\s*\+)",
        r"\|\s*r\s*1\b(?!\s*\+)",
        I + r"r1\s*\(line\)",
        I + r"line\s+end\s+to\s+end",
    ),
    *_t(
        "rn",
        0.95,
        r"^r\s*n\b",
        r"\|\s*r\s*n\b",
        I + r"rn\s*\(neutral\)",
        I + r"neutral\s+end\s+to\s+end",
    ),
    *_t("r2", 0.95, r"^r\s*2\b", r"\|\s*r\s*2\b", I + r"r2\s*\(cpc\)", I + r"cpc\s+end\s+to\s+end"),
    *_t("r1", 0.9, I + r"^ring\s+r1\b"),
    *_t("rn", 0.9, I + r"^ring\s+rn\b"),
    *_t("r2", 0.9, I + r"^ring\s+r2\b"),
    *_t("r1_r2", 0.97, I + r"R\s*1\s*\+\s*R\s*2", I + r"\(R1\s*\+\s*R2\)", I + r"R1R2"),
    *_t("r1_rn", 0.97, I + r"R\s*1\s*\+\s*R\s*n"),
    *_t("r2_only", 0.9, r"^R\s*2$", r"\|\s*R\s*2$", r"^R\s*2\s*\(", I + r"continuity.*\|\s*R2$"),
    *_t(
        "ir_test_voltage",
        0.9,
        I + r"test\s+volt",
        I + r"^\(?V\)?$",
        I + r"insulation.*\|\s*V$",
        I + r"insulation.*\|\s*test\s*V\b",
        I + r"\bV\s*dc\b",
    ),
    *_t(
        "ir_live_live",
        0.95,
        I + r"\bL\s*[-/–]\s*L\b",
        I + r"live\s*[-/–]\s*live",
        I + r"\bL\s*[-/–]\s*N\b",
        I + r"line\s*[-/–]\s*neutral",
        I + r"between\s+live",
    ),
    *_t(
        "ir_live_earth",
        0.95,
        I + r"\bL\s*[-/–]\s*E\b",
        I + r"live\s*[-/–]\s*earth",
        I + r"line\s*[-/–]\s*earth",
        I + r"live\s+to\s+earth",
        I + r"\bL\s*[-/–]\s*cpc\b",
    ),
    *_t(
        "ir_neutral_earth",
        0.95,
        I + r"\bN\s*[-/–]\s*E\b",
        I + r"neutral\s*[-/–]\s*earth",
        I + r"neutral\s+to\s+earth",
    ),
    *_t(
        "ir_live_earth",
        0.5,
        I + r"^(?:insulation(?:\s+resistance)?|IR)(?:\s*\(?M\s*(?:Ω|ohm)\)?)?$",
    ),
    *_t("polarity", 0.97, I + r"polarity", I + r"^pol\.?$"),
    *_t(
        "zs",
        0.9,
        I + r"(?:measured|recorded|actual)\s+Zs",
        I + r"^Zs\b(?!\s*max)",
        I + r"\|\s*Zs\b(?!\s*max)",
        I + r"earth\s+fault\s+loop\s+imp",
    ),
    *_t(
        "rcd_time",
        0.9,
        I + r"(?:disconnection|operating|trip)\s+time.*(?:x\s*1|@\s*I|at\s+I|1\s*[x×])",
        I + r"rcd.*(?:operating|trip)\s+time",
        I + r"^(?:x|×)\s*1$",
        I + r"\b1\s*[x×]\s*I",
        I + r"I\s*Δ\s*n\s*\(ms\)",
        I + r"^(?:rcd\s+)?time\s*\(?ms\)?$",
        I + r"\|\s*@\s*IΔn$",
        I + r"\|\s*ms$",
    ),
    *_t("rcd_time", 0.6, I + r"^\(?ms\)?$"),
    *_t("rcd_time", 0.8, I + r"\btrip\b", I + r"\(ms\)"),
    *_t("breaking_capacity", 0.85, r"^I\s*cn\b", r"^I\s*cs\b"),
    *_t("ir_test_voltage", 0.85, I + r"^IR\s+test\b", I + r"\(V\)$"),
    *_t("rcd_time_5x", 0.95, r"5\s*[x×]\s*I", I + r"5\s*[x×]", I + r"\|\s*@\s*5"),
    *_t(
        "rcd_button",
        0.9,
        I + r"^(?!.*(?:afdd|arc\s+fault)).*test\s+button",
        I + r"rcd.*button",
        I + r"^button$",
        I + r"rcd.*\|\s*(?:test|btn)$",
    ),
    *_t("afdd_button", 0.95, I + r"afdd", I + r"arc\s+fault"),
    *_t("spd_type", 0.9, I + r"\bSPD\b.*\btype\b", I + r"surge.*\btype\b"),
    *_t(
        "spd_indicator",
        0.9,
        I + r"\bSPD\b.*(?:indicator|status)",
        I + r"surge.*(?:indicator|status)",
    ),
    *_t("remarks", 0.95, I + r"remarks?", I + r"comments?", I + r"^notes?$", I + r"observations?"),
]

# --- board and certificate labels (text printed before the value on the same line) ---------
BOARD_LABELS: dict[str, list[str]] = {
    "board_ref": [
        r"(?i)(?:distribution\s+)?board\s*(?:ref(?:erence)?|designation|no\.?|id)\s*[:.]?",
        r"(?i)(?:distribution|consumer)\s+(?:board|unit)\b\s*[:.]?",
        r"(?i)\bDB\s*(?:ref|no)\.?\s*[:.]?",
        r"(?i)^board\s*[:.]",
        r"(?i)^board\b(?=\s+[A-Z]{0,3}\d)",
    ],
    "location": [r"(?i)(?:board\s+)?location\s*[:.]?"],
    "supplied_from": [r"(?i)supplied\s+from\s*[:.]?", r"(?i)fed\s+from\s*[:.]?"],
    "ze": [
        r"Z\s*db\s*(?:\((?:Ω|ohms?)\))?\s*[:=]?",
        r"Z\s*e\s*(?:at\s+(?:the\s+)?board)?\s*(?:\((?:Ω|ohms?)\))?\s*[:=]?",
        r"(?i)loop\s+impedance\s+at\s+(?:the\s+)?board\s*[:=]?",
    ],
    "ipf": [
        r"I\s*pf\s*(?:\(kA\))?\s*[:=]?",
        r"(?i)\bPFC\s*(?:\(kA\))?\s*[:=]?",
        r"(?i)prospective\s+fault\s+current\s*(?:\(kA\))?\s*[:=]?",
    ],
    "earthing": [
        r"(?i)earthing\s*(?:arrangement|system)?\s*[:.]?",
        r"(?i)\bsystem\s*[:.]?(?=\s*(?:TN|TT|IT)\b)",
    ],
    "board_polarity": [r"(?i)(?:supply\s+)?polarity\s+(?:confirmed|checked)\s*[:.]?"],
}

CERTIFICATE_LABELS: dict[str, list[str]] = {
    "cert_number": [
        r"(?i)(?:certificate|report|cert\.?|record|job)\s*(?:no\.?|number|ref(?:erence)?\.?)\s*[:.]?",
        r"(?i)serial\s+no\.?\s+of\s+(?:this\s+)?(?:certificate|report)\s*[:.]?",
    ],
    "report_type": [
        r"(?i)report\s+type\s*[:.]?",
        r"(?i)type\s+of\s+(?:certificate|report)\s*[:.]?",
    ],
    "address": [
        r"(?i)(?:installation|site|property|premises)\s+address\s*[:.]?",
        r"(?i)^address\s*[:.]",
        r"(?i)^premises\b\s*[:.]?",
    ],
    "client": [
        r"(?i)client(?:\s+name)?\s*[:.]?",
        r"(?i)^customer\b\s*[:.]?",
        r"(?i)(?:person\s+)?ordering\s+the\s+(?:report|work)\s*[:.]?",
        r"(?i)^ordered\s+by\b\s*[:.]?",
    ],
    "contractor": [
        r"(?i)contractor(?:\s+name)?\s*[:.]?",
        r"(?i)company\s*[:.]",
        r"(?i)electrical\s+contractor\s*[:.]?",
        r"(?i)^(?:testing|contracting)\s+(?:firm|company)\b\s*[:.]?",
        r"(?i)^company\b\s*[:.]?",
    ],
    "inspection_date": [
        r"(?i)date\s+of\s+(?:inspection|test(?:ing)?)\s*[:.]?",
        r"(?i)(?:inspection|test)\s+date\s*[:.]?",
        r"(?i)date\s+inspected\s*[:.]?",
        r"(?i)^tested\s+on\b\s*[:.]?",
        r"(?i)^test\s+date\b\s*[:.]?",
    ],
    "next_inspection": [
        r"(?i)next\s+inspection(?:\s+(?:due|date|by))?\s*[:.]?",
        r"(?i)re-?inspect(?:ion)?\s+(?:by|due)\s*[:.]?",
        r"(?i)next\s+test\s+(?:due|date|by)\s*[:.]?",
        r"(?i)^re-?test\s+(?:by|due)\b\s*[:.]?",
    ],
    "inspector": [
        r"(?i)(?:inspector|inspected\s+by|tested\s+by|inspector\s+name)\s*[:.]?",
        r"(?i)name\s+of\s+inspector\s*[:.]?",
        r"(?i)^engineer\b\s*[:.]?",
    ],
    "instrument_serial": [
        r"(?i)(?:instrument|tester|test\s+instrument|meter)\s*(?:serial)?\s*(?:no\.?|number|serial)\s*[:.]?",
        r"(?i)multi-?function\s+(?:tester|instrument)\s*[:.]?",
        r"(?i)^(?:instrument|tester)\b\s*[:.]?(?=\s*(?:—|–|-)?\s*\S*\d)",
    ],
    "earthing": [r"(?i)earthing\s*(?:arrangement|system)\s*[:.]?"],
    "ze": [r"Z\s*e\s*(?:\((?:Ω|ohms?)\))?\s*[:=]"],
    "ipf": [r"I\s*pf\s*(?:\(kA\))?\s*[:=]", r"(?i)\bPFC\s*(?:\(kA\))?\s*[:=]"],
    "overall_outcome": [r"(?i)overall\s+(?:assessment|condition|outcome)\s*[:.]?"],
    "observation_codes": [r"(?i)observation\s+codes?\s*[:.]?"],
    "limitations": [r"(?i)(?:agreed\s+)?limitations\s*[:.]?"],
}

# Words that name the schedule itself: used to find schedule pages.
SCHEDULE_TITLES = [
    r"(?i)schedule\s+of\s+(?:test\s+results|circuit\s+details|results)",
    r"(?i)test\s+results\s+schedule",
    r"(?i)circuit\s+test\s+results",
]

# Earthing system values worth recognising next to a label.
EARTHING_VALUES = r"TN-C-S|TN-S|TT|IT|PME"


def normalise_header(text: str) -> str:
    """NFKC (so U+2126 ohm sign becomes Ω), fold spaces, unify dashes; case kept."""
    s = unicodedata.normalize("NFKC", text)
    s = s.replace("\u2013", "-").replace("\u2014", "-").replace("\u2212", "-")
    return " ".join(s.split())


@dataclass(frozen=True)
class Match:
    field: str
    score: float
    term: str  # the pattern that matched


def _squash(s: str) -> str:
    """Undo what odd glyphs do to extracted header text: a unit glyph read out of place
    ("Ω M easured Zs ()") — drop unit glyphs and empty brackets, rejoin a split capital."""
    s = re.sub(r"[ΩΔ²]", "", s)
    s = re.sub(r"\(\s*\)", "", s)
    s = re.sub(r"\b([A-Z]) ([a-z]{2,})", r"\1\2", s)
    return " ".join(s.split())


def match_header(text: str) -> list[Match]:
    """Every field whose terms match the header text, best score first (one per field)."""
    s = normalise_header(text)
    best: dict[str, Match] = {}
    for term in CIRCUIT_TERMS:
        if term.pattern.search(s) or term.pattern.search(_squash(s)):
            cur = best.get(term.field)
            if cur is None or term.score > cur.score:
                best[term.field] = Match(term.field, term.score, term.pattern.pattern)
    return sorted(best.values(), key=lambda m: -m.score)
