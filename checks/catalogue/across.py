"""Across certificates: copied or repeated readings, reused numbers, impossible workloads.

These checks are declared here like every other (identity, options, documentation, profile
settings) and run by the corpus stage (``corpus/crosscheck.py``), which alone sees the other
certificates. On one certificate by itself they never apply.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from certvet.checks.base import CorpusCheck, option
from certvet.checks.model import Severity
from certvet.checks.registry import register

_SAME_READINGS = ("common practice, no source: independent tests of different installations do "
                  "not produce the same set of readings")


@dataclass(frozen=True)
class ReadingsMatchOptions:
    """When two certificates' readings count as the same (both readings-match checks)."""

    match_share: float = option(
        0.8, "common practice, no source",
        "share of aligned readings that must be equal or ±1 in the last digit for a block to "
        "count as copied; independent tests of different houses rarely agree on one in five")
    min_compared: int = option(
        12, "common practice, no source",
        "fewest aligned readings a match must rest on, so a few common values never link "
        "two certificates")
    max_candidates: int = option(
        200, "common practice, no source",
        "most candidate boards verified per lookup, best-hit first (bounds the lookup time)")
    max_offset: int = option(
        2, "common practice, no source",
        "circuit rows a copied board may be shifted by (a row added or removed)")


@dataclass(frozen=True)
class WorkloadOptions:
    minutes_per_circuit: float = option(
        10.0, "from memory: dead tests (continuity, insulation, polarity) and live tests (Zs, "
        "RCD) on one final circuit take an experienced inspector well over 10 minutes; a "
        "deliberately generous lower bound — set your own",
        "fewest minutes one circuit's tests can take")
    working_day_hours: float = option(
        10.0, "common practice, no source: a long day on site, travel not deducted",
        "hours of testing one inspector or instrument can do in a day")

    @property
    def max_circuits_per_day(self) -> int:
        if self.minutes_per_circuit <= 0:
            return 10**9  # no lower bound on the time a circuit takes: no limit
        return math.floor(self.working_day_hours * 60 / self.minutes_per_circuit)


@register
class ScheduleCopiedFromOtherAddress(CorpusCheck):
    """The readings match those of a certificate for another address.

    What it checks:
    Every certificate's readings (continuity, insulation, Zs, RCD times, circuit by circuit)
    against every other certificate in the corpus: a whole certificate, a board or a run of
    circuits whose aligned readings are equal, or within ±1 in the last printed digit, for at
    least match_share of at least min_compared readings, on a certificate for a different
    address. Both certificates get the finding, each naming the other; the one with the
    earlier inspection date is named as the likely source.

    Why it matters:
    Two installations tested independently never give the same readings reading for reading.
    As recorded, at least one of the two certificates does not report measurements of its
    own installation: a schedule filled in from another job. That is why the severity is
    "impossible": the record is not credible until the contractor shows how it was measured.

    Known false alarms:
    Two certificates for the same installation under differently written addresses (a flat
    number added, a house name instead of a number); a new-build estate certified from one
    design calculation with readings left as calculated values.

    Failing example:
    Certificate 2 for 4 Elm Road carries the same 14 readings on its ring and radials as
    certificate 1 for 9 Oak Lane, dated a month earlier.

    Passing example:
    Two certificates for different addresses with the same circuit layout whose readings
    differ in most places.

    Options:
    match_share: share of aligned readings that must agree.
    min_compared: fewest aligned readings a match rests on.
    max_candidates: candidate boards verified per lookup.
    max_offset: circuit rows a copied board may be shifted by.

    Reference:
    Common practice, no source: independent tests of different installations do not produce
    the same set of readings.
    """

    id = "schedule-copied-from-other-address"
    title = "Readings match a certificate for another address"
    severity = Severity.IMPOSSIBLE
    reference = _SAME_READINGS
    basis = "common practice"
    Options = ReadingsMatchOptions


@register
class ScheduleRepeatsEarlierAtAddress(CorpusCheck):
    """The readings repeat another certificate for the same address.

    What it checks:
    A certificate against the other certificates for the same address (addresses compared
    after normalising case, punctuation and street abbreviations) with a different
    certificate number: the same matching rule as for another address. Both certificates
    get the finding; the earlier one is named as the likely source.

    Why it matters:
    Readings drift between inspections (cables age, loads and devices change), so a periodic
    inspection that repeats the last one's readings was probably copied from it rather than
    retested.

    Known false alarms:
    A certificate reissued with a new number to correct a detail, with the same readings;
    two certificates for the same inspection (a copy for the landlord and the tenant).

    Failing example:
    The 2024 report for 9 Oak Lane repeats 14 of 14 readings of the 2019 report for 9 Oak Lane.

    Passing example:
    The 2024 report's readings differ from the 2019 report's in most places.

    Options:
    match_share: share of aligned readings that must agree.
    min_compared: fewest aligned readings a match rests on.
    max_candidates: candidate boards verified per lookup.
    max_offset: circuit rows a copied board may be shifted by.

    Reference:
    Common practice, no source: readings seldom come out the same years apart.
    """

    id = "schedule-repeats-earlier-at-address"
    title = "Readings repeat another certificate for this address"
    severity = Severity.QUERY
    reference = "common practice, no source: readings seldom come out the same years apart"
    basis = "common practice"
    Options = ReadingsMatchOptions


@register
class CertificateNumberReused(CorpusCheck):
    """The certificate number is also printed on another certificate.

    What it checks:
    Certificate numbers (compared without spaces, punctuation or case) across the corpus:
    a number printed on two or more certificates with different content.

    Why it matters:
    A certificate number identifies one report. A number used twice means one of the
    reports was copied, or the contractor's numbering cannot be trusted to find a record.

    Known false alarms:
    Two firms whose numbering schemes overlap ("0001"); a certificate scanned twice into
    files with different bytes.

    Failing example:
    Certificate QX-1001 for 4 Elm Road and certificate QX-1001 for 9 Oak Lane.

    Passing example:
    Certificate numbers QX-1001 and QX-1002.

    Options:
    None.

    Reference:
    Common practice, no source: a certificate number identifies one report.
    """

    id = "certificate-number-reused"
    title = "Certificate number used on another certificate"
    severity = Severity.QUERY
    reference = "common practice, no source: a certificate number identifies one report"
    basis = "common practice"


_WORKLOAD_DOC = """

    Known false alarms:
    Certificates dated on the day they were written up rather than the day of the tests; a
    team of inspectors signing under one name; one instrument serial copied onto every
    certificate of a team from the first one filled in.

    Options:
    minutes_per_circuit: fewest minutes one circuit's tests can take.
    working_day_hours: hours of testing in one day.

    Reference:
    From memory (minutes per circuit) and common practice (hours in a day), no source.
    """


@register
class InspectorWorkloadImplausible(CorpusCheck):
    __doc__ = """More tested circuits in one day for one inspector than can be tested.

    What it checks:
    The tested circuits (circuits with at least one measured reading) of every certificate
    one inspector signed for the same inspection date, added up, against working_day_hours
    × 60 / minutes_per_circuit. Every certificate of that day gets the finding.

    Why it matters:
    Dead and live tests take time on every circuit. An inspector who signed more circuits
    in a day than can be tested did not test them all: some readings were not measured.

    Failing example:
    One inspector signs 75 tested circuits on 3 March across four certificates (at most 60).

    Passing example:
    One inspector signs 40 tested circuits on 3 March.
    """ + _WORKLOAD_DOC

    id = "inspector-workload-implausible"
    title = "More circuits in a day than one inspector can test"
    severity = Severity.QUERY
    reference = "from memory (minutes per circuit), see the options' sources"
    basis = "from memory"
    Options = WorkloadOptions


@register
class InstrumentWorkloadImplausible(CorpusCheck):
    __doc__ = """More tested circuits in one day on one test instrument than can be tested.

    What it checks:
    As for one inspector, by the test instrument's serial number: the tested circuits of
    every certificate naming that instrument for the same inspection date, added up.

    Why it matters:
    One instrument is in one place at a time. More circuits on one serial in a day than
    can be tested means the serial was copied onto certificates it did not test.

    Failing example:
    Instrument ZX-4471 on 75 tested circuits on 3 March across four certificates (at most 60).

    Passing example:
    Instrument ZX-4471 on 40 tested circuits on 3 March.
    """ + _WORKLOAD_DOC

    id = "instrument-workload-implausible"
    title = "More circuits in a day than one instrument can test"
    severity = Severity.QUERY
    reference = "from memory (minutes per circuit), see the options' sources"
    basis = "from memory"
    Options = WorkloadOptions


READINGS_MATCH_CHECKS = frozenset({ScheduleCopiedFromOtherAddress.id,
                                   ScheduleRepeatsEarlierAtAddress.id})
"""The checks whose findings say two certificates carry the same readings (a copy)."""
