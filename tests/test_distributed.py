"""The batch on a Dask cluster (two worker processes on loopback) stores the same certificates
and findings as a local run of the demo fixtures, and writes the same reports."""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest
from test_batch import snapshot

from certvet.api import DEMO_DIR, DEMO_LAYOUTS, load_layouts
from certvet.batch import Status, run_batch

pytestmark = pytest.mark.slow


@pytest.fixture(scope="module")
def cluster():
    distributed = pytest.importorskip("distributed")
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  host="127.0.0.1", dashboard_address=None) as c:
        yield c


def test_dask_run_equals_local_run(cluster, tmp_path: Path) -> None:
    inbox = tmp_path / "inbox"
    inbox.mkdir()
    for pdf in sorted(DEMO_DIR.glob("*.pdf")):
        shutil.copy(pdf, inbox / pdf.name)
    (inbox / "broken.pdf").write_bytes(b"%PDF-1.4\nnot really\n")
    layouts = load_layouts([DEMO_LAYOUTS])

    local = run_batch([inbox], layouts=layouts, store=tmp_path / "local.sqlite",
                      out_dir=tmp_path / "local", workers=2)
    remote = run_batch([inbox], layouts=layouts, store=tmp_path / "dask.sqlite",
                       out_dir=tmp_path / "dask", scheduler=cluster.scheduler_address)

    assert remote.totals == local.totals
    assert remote.totals["audited"] >= 3 and remote.totals["failed"] == 1
    got, want = snapshot(tmp_path / "dask.sqlite"), snapshot(tmp_path / "local.sqlite")
    assert got["certificates"] and got["findings"]
    assert got == want
    assert {o.path: o.reason for o in remote.failed} == {o.path: o.reason for o in local.failed}
    assert [cf.finding for cf in remote.cross_findings] == [
        cf.finding for cf in local.cross_findings]
    # the client wrote each certificate's reports, same names and same JSON findings
    for o in remote.outcomes:
        if o.status is Status.AUDITED:
            twin = tmp_path / "local" / "certificates" / o.reports["json"].name
            assert o.reports["json"].parent == tmp_path / "dask" / "certificates"
            assert o.reports["html"].exists() and twin.exists()
            assert _findings(o.reports["json"]) == _findings(twin)
    assert remote.exit_code == local.exit_code == 3


def test_unreachable_scheduler_is_one_line_error(tmp_path: Path) -> None:
    inbox = tmp_path / "inbox"
    inbox.mkdir()
    shutil.copy(DEMO_DIR / "grid-clean-01.pdf", inbox)
    with pytest.raises(ConnectionError) as err:
        run_batch([inbox], layouts=load_layouts([DEMO_LAYOUTS]), store=tmp_path / "c.sqlite",
                  scheduler="tcp://127.0.0.1:9")
    assert "tcp://127.0.0.1:9" in str(err.value) and "\n" not in str(err.value)


def _findings(path: Path) -> list:
    import json

    data = json.loads(path.read_text(encoding="utf-8"))
    return data.get("findings", data)
