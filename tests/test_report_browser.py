"""The HTML report in a real browser: hostile cell text stays text, and the page renders.

Needs headless Chromium. Skipped when it is absent on a developer machine; in CI (the CI
environment variable set) a missing browser is a failure.
"""

from __future__ import annotations

import os
import shutil
import subprocess
from pathlib import Path

import pytest
from casekit import make_certificate

from certvet.checks.runner import run_checks
from certvet.reports.html import write_html

pytestmark = pytest.mark.browser

TITLE_ATTACK = "<script>document.title='pwned'</script>"
ATTR_ATTACK = "<img src=x onerror=\"document.body.setAttribute('data-pwned','1')\">"


def _chromium() -> str:
    for name in ("chromium", "chromium-browser", "google-chrome"):
        found = shutil.which(name)
        if found:
            return found
    if os.environ.get("CI"):
        pytest.fail("headless Chromium is required in CI but was not found on PATH")
    pytest.skip("headless Chromium not installed (apt-get install chromium)")


def _run(browser: str, profile_dir: Path, *args: str) -> subprocess.CompletedProcess[str]:
    cmd = [
        browser, "--headless", "--no-sandbox", "--disable-gpu",
        "--disable-background-networking", "--disable-component-update", "--disable-sync",
        "--no-first-run", f"--user-data-dir={profile_dir}", *args,
    ]
    return subprocess.run(cmd, capture_output=True, text=True, timeout=120, check=False)


@pytest.fixture
def report(tmp_path: Path) -> Path:
    cert = make_certificate(
        [],
        certificate={"cert_number": "EIC-7", "client": TITLE_ATTACK, "address": "1 High St"},
        boards=[{
            "board_ref": "DB1",
            "circuits": [
                {"description": TITLE_ATTACK, "r1": "0.52", "rn": "0.61", "zs": "0.5"},
                {"description": ATTR_ATTACK, "zs": "0.7", "remarks": ATTR_ATTACK},
            ],
        }],
    )
    return write_html(cert, run_checks(cert), tmp_path / "report.html",
                      certvet_version="test", generated_at="fixed")


def test_hostile_text_is_shown_not_run(report: Path, tmp_path: Path) -> None:
    browser = _chromium()
    done = _run(browser, tmp_path / "profile", "--dump-dom", report.as_uri())
    assert done.returncode == 0, done.stderr[-2000:]
    dom = done.stdout
    assert "<main>" in dom  # the page was loaded and serialised
    # the text is on the page, escaped, exactly as printed
    assert "&lt;script&gt;document.title='pwned'&lt;/script&gt;" in dom
    assert "&lt;img src=x onerror=\"document.body.setAttribute('data-pwned','1')\"&gt;" in dom
    # and neither attack took effect
    title = dom.split("<title>", 1)[1].split("</title>", 1)[0]
    assert title == "Desk audit of certificate EIC-7"
    assert "data-pwned" not in dom.split("<body", 1)[1].split(">", 1)[0]
    assert "<img" not in dom and "<script" not in dom


def test_report_renders_to_a_screenshot(report: Path, tmp_path: Path) -> None:
    browser = _chromium()
    shot = tmp_path / "report.png"
    done = _run(browser, tmp_path / "profile", f"--screenshot={shot}", "--window-size=1400,2000",
                report.as_uri())
    assert done.returncode == 0, done.stderr[-2000:]
    data = shot.read_bytes()
    assert data[:8] == b"\x89PNG\r\n\x1a\n"
    assert len(data) > 20_000  # a blank page compresses to far less than this
