"""The portfolio page: parses, lists every certificate with a working link to its report,
shows the clusters side by side, charts inline (no scripts), escapes what PDFs say, and ranks
by the documented score."""

from __future__ import annotations

from html.parser import HTMLParser
from pathlib import Path

import pytest
from test_batch import (  # noqa: F401 (fixture)
    COPY_NUMBER,
    ORIGINAL_NUMBER,
    batch_dir,  # noqa: F401 (fixture)
    first_run,
)

from certvet.batch import write_portfolio
from certvet.corpus.store import Corpus
from certvet.reports.portfolio import CertInput, LinkInput, PortfolioData, render_portfolio, risk


class Page(HTMLParser):
    def __init__(self) -> None:
        super().__init__()
        self.tags: list[str] = []
        self.links: list[str] = []
        self.text: list[str] = []
        self.stack: list[str] = []

    def handle_starttag(self, tag, attrs):  # type: ignore[no-untyped-def]
        self.tags.append(tag)
        if tag not in ("br", "meta", "line", "rect", "path"):
            self.stack.append(tag)
        if tag == "a":
            self.links.extend(v for k, v in attrs if k == "href" and v)

    def handle_endtag(self, tag):  # type: ignore[no-untyped-def]
        if tag in self.stack:
            while self.stack and self.stack.pop() != tag:
                pass

    def handle_data(self, data):  # type: ignore[no-untyped-def]
        self.text.append(data)


def parse(path: Path) -> Page:
    page = Page()
    page.feed(path.read_text(encoding="utf-8"))
    page.close()
    return page


def test_batch_portfolio_lists_every_certificate_with_its_report(first_run) -> None:  # noqa: F811
    report, _, work = first_run
    path = report.portfolio
    page = parse(path)
    text = " ".join(page.text)
    assert "script" not in page.tags and "svg" in page.tags
    with Corpus(work / "corpus.sqlite") as corpus:
        rows = corpus.certificates()
    assert len(rows) == report.totals["audited"]
    for row in rows:
        assert row.name in text and row.address in text
    hrefs = [h for h in page.links if h.endswith(".html") and not h.startswith("#")]
    targets = {(path.parent / h).resolve() for h in hrefs}
    for o in report.outcomes:
        if "html" in o.reports:
            assert o.reports["html"].resolve() in targets
    assert all(t.exists() for t in targets)
    # failures with their reasons, the cluster of the planted copy, the cautions
    assert "not a PDF" in text and "0 bytes" in text
    assert f"{ORIGINAL_NUMBER} ↔ {COPY_NUMBER}" in text or f"{COPY_NUMBER} ↔ {ORIGINAL_NUMBER}" \
        in text
    assert "cannot show that an installation is safe" in text
    assert "BS 7671" in text


def test_corpus_portfolio_from_store_path(first_run, tmp_path: Path) -> None:  # noqa: F811
    _, _, work = first_run
    out = write_portfolio(work / "corpus.sqlite", tmp_path / "all.html",
                          reports_dir=work / "out" / "certificates")
    page = parse(out)
    assert "the whole corpus" in " ".join(page.text)
    assert len([h for h in page.links if h.endswith(".html")]) >= 1


def _cert(cid: int, name: str, findings=(), address: str = "1 Test Row") -> CertInput:
    return CertInput(id=cid, name=name, sha256=f"{cid:064x}", source=f"{name}.pdf",
                     address=address, inspector="I. Nspector", contractor="Testing Co",
                     date="2026-01-05", verdict_key="queries", verdict_label="queries to raise",
                     tone="query", circuits=10, tested=10, findings=tuple(findings))


def test_risk_score_follows_the_documented_points() -> None:
    f = [("zs-over-max-for-device", "breach", "m")] * 5 + [("ring-rn-matches-r1", "query", "m")]
    copy = LinkInput(cert=1, other=2, check_id="schedule-copied-from-other-address",
                     severity="query", message="m", kind="whole", share=1.0,
                     related=("B-2",))
    reused = LinkInput(cert=1, other=None, check_id="certificate-number-reused",
                       severity="query", message="m")
    score, reasons = risk(_cert(1, "A-1", f), [copy, reused])
    # 3 breaches count (5 each), 1 query (2), a whole copy (12), a reused number (6)
    assert score == 15 + 2 + 12 + 6
    assert reasons[0] == "5 × breach: zs-over-max-for-device (+15)"
    assert any(r.startswith("whole schedule shared with B-2") for r in reasons)
    assert risk(_cert(3, "C-3"), [])[0] == 0


def test_untrusted_text_is_escaped_and_ranked(tmp_path: Path) -> None:
    evil = _cert(1, "<script>alert(1)</script>", [("zs-over-max-for-device", "breach", "m")],
                 address='"><img src=x onerror=alert(1)>')
    calm = _cert(2, "CALM-2")
    data = PortfolioData(title="t", scope="this batch", store="s.sqlite",
                         certificates=[calm, evil], failures=[("x.pdf", "x.pdf: <b>bad</b>")],
                         links=[], parties=[], zs_ratios=[0.5, 1.2], last_digits=[1] * 10,
                         workload=[("I. Nspector", "2026-01-05", 20)], workload_limit=60)
    out = render_portfolio(data, tmp_path / "p.html")
    html = out.read_text(encoding="utf-8")
    assert "<script>alert" not in html and "<img src=x" not in html and "<b>bad" not in html
    assert "&lt;script&gt;" in html
    assert html.index("&lt;script&gt;alert") < html.index("CALM-2")  # the breach ranks first


@pytest.mark.browser
def test_portfolio_renders_in_headless_chromium(first_run, tmp_path: Path) -> None:  # noqa: F811
    import shutil
    import subprocess

    exe = shutil.which("chromium") or shutil.which("chromium-browser")
    if not exe:
        pytest.skip("chromium not installed")
    report, _, _ = first_run
    png = tmp_path / "p.png"
    subprocess.run([exe, "--headless", "--no-sandbox", "--disable-gpu",
                    "--disable-background-networking", "--disable-component-update",
                    "--disable-sync", "--no-first-run", f"--user-data-dir={tmp_path / 'u'}",
                    f"--screenshot={png}", "--window-size=1400,2400",
                    report.portfolio.resolve().as_uri()],
                   capture_output=True, timeout=120, check=False)
    assert png.exists() and png.stat().st_size > 10_000


def test_a_big_portfolio_summarises_then_groups_by_verdict(tmp_path: Path) -> None:
    """1,000 certificates: counts by verdict and a short sample come first, then one <details>
    per verdict; the groups with something to question are open, "no concerns" is closed."""
    import re
    from dataclasses import replace

    from certvet.reports.portfolio import SAMPLE_SIZE

    breach = [("zs-over-max-for-device", "breach", "m")]
    certs = [replace(_cert(i, f"BIG-{i}", breach if i % 10 == 0 else ()),
                     **({} if i % 10 == 0 else {"verdict_key": "no_concerns",
                                                "verdict_label": "no concerns found",
                                                "tone": "clear"}))
             for i in range(1, 1001)]
    data = PortfolioData(title="t", scope="this batch", store="s.sqlite", certificates=certs,
                         failures=[], links=[], parties=[], zs_ratios=[], last_digits=[],
                         workload=[], workload_limit=60)
    html = render_portfolio(data, tmp_path / "p.html").read_text(encoding="utf-8")
    sample = html[html.index('id="sample"'):html.index('id="by-verdict"')]
    assert sample.count("<td class=\"score\">") == SAMPLE_SIZE  # the top scores, not all 1,000
    groups = re.findall(r'<details class="group[^"]*"( open)?><summary><span class="pill '
                        r'tone-(\w+)">[^<]*</span> (\d+) certificate', html)
    assert [(tone, int(n), bool(o)) for o, tone, n in groups] == [
        ("query", 100, True), ("clear", 900, False)]
    assert html.index('class="tiles"') < html.index('id="sample"') < html.index('id="by-verdict"')
