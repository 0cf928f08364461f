"""The ring, radial, loop and supply checks stay quiet on sensible clean schedules.

Clean data follows the demo generator's rules (common practice, no source): Zs = Ze + R1+R2
± 0.03 Ω; rn within 0.03 Ω of r1; r2/r1 1.55–1.75 on 2.5/1.5 mm²; R1+R2 up to 0.05 Ω above
(r1+r2)/4; rings 35–70 m of 2.5 mm² (IEC 60228 Table 2, 7.41 mΩ/m); Zs under 80 % of the
Table 41.3 maximum; Ze 0.15–0.8 Ω (TN-C-S up to the 0.35 Ω commonly declared, TN-S above);
Ipf ≈ 230/Ze. A planted fault in the same data is then found, so the test can fail.
"""

from __future__ import annotations

import random

from casekit import make_certificate

from certvet.checks.registry import all_checks
from certvet.extractor.records import Certificate

GROUPS = {"ring", "radial", "loop", "supply"}
B32, B6 = 1.37, 7.28  # BS 7671:2018+A2:2022 Table 41.3


def _clean(rng: random.Random) -> Certificate:
    ze = round(rng.uniform(0.15, 0.8), 2)
    earthing = "TN-C-S" if ze <= 0.35 else "TN-S"
    circuits = []
    while True:  # a ring whose Zs is within 80 % of B32
        r1 = round(rng.uniform(35, 70) * 7.41 / 1000, 2)  # IEC 60228 Table 2: 2.5 mm²
        rn = round(r1 + rng.uniform(-0.03, 0.03), 2)
        r2 = round(r1 * rng.uniform(1.55, 1.75), 2)
        r1r2 = round((r1 + r2) / 4 + rng.uniform(0, 0.05), 2)
        zs = round(ze + r1r2 + rng.uniform(-0.03, 0.03), 2)
        if zs < 0.8 * B32:
            break
    circuits.append(dict(
        circuit_ref="1", description="Sockets ring", live_csa="2.5", cpc_csa="1.5", points="10",
        device_standard="BS EN 60898", device_type="B", rating="32", breaking_capacity="6",
        max_disconnection_time="0.4", max_zs="1.37", r1=f"{r1:.2f}", rn=f"{rn:.2f}",
        r2=f"{r2:.2f}", r1_r2=f"{r1r2:.2f}", zs=f"{zs:.2f}",
    ))
    length = rng.uniform(8, 40)
    r1r2 = round(length * (18.1 + 18.1) / 1000, 2)  # IEC 60228 Table 2: 1.0/1.0 mm²
    zs = round(ze + r1r2 + rng.uniform(-0.03, 0.03), 2)
    circuits.append(dict(
        circuit_ref="2", description="Lights", live_csa="1.0", cpc_csa="1.0", points="8",
        device_standard="60898", device_type="Type B", rating="6", breaking_capacity="6",
        max_disconnection_time="0.4", max_zs="7.28", r1="N/A", rn="N/A", r2="N/A",
        r1_r2=f"{r1r2:.2f}", zs=f"{zs:.2f}",
    ))
    ipf = round(230 / ze / 1000, 2)
    return make_certificate(
        circuits,
        board={"ze": f"{ze:.2f}", "ipf": f"{ipf:.2f}", "earthing": earthing},
        certificate={"ze": f"{ze:.2f}", "ipf": f"{ipf:.2f}", "earthing": earthing},
    )


def _findings(cert: Certificate) -> list[str]:
    out = []
    for cls in all_checks():
        if cls.group in GROUPS:
            _, found = cls().run(cert)
            out += [f"{f.check_id}: {f.message}" for f in found]
    return out


def test_clean_schedules_raise_nothing() -> None:
    rng = random.Random(7671)
    for _ in range(400):
        cert = _clean(rng)
        assert _findings(cert) == [], [c.cells for c in cert.boards[0].circuits]


def test_a_planted_fault_is_found() -> None:
    cert = _clean(random.Random(1))
    ring = cert.boards[0].circuits[0]
    bad = make_certificate([{"zs": "1.60", "device_type": "B", "rating": "32"}])
    ring.cells["zs"] = bad.boards[0].circuits[0].cells["zs"]  # above B32's 1.37 Ω
    ids = {line.split(":")[0] for line in _findings(cert)}
    assert "zs-over-max-for-device" in ids
    assert "zs-matches-ze-plus-r1r2" in ids
