"""The return report as one row per specimen, for the lender's database (CSV or XLSX)."""

from __future__ import annotations

from typing import Any

from tracker.domain import precision
from tracker.domain.recovery import recovery_words
from tracker.domain.timeutil import iso_utc
from tracker.services.read.report_views import ResultEntry, ReturnReport, SpecimenEntry

COLUMNS = [
    "loanReference",
    "lender",
    "institutionCode",
    "catalogNumber",
    "trackerId",
    "scientificName",
    "element",
    "sampled",
    "massRemovedMg",
    "massRemovedUncertaintyMg",
    "permittedMg",
    "powderDissolvedMg",
    "powderReturnedMg",
    "powderDestroyedMg",
    "powderRetainedMg",
    "powderConsumedMg",
    "powderStillHeldMg",
    "residualSolutions",
    "dissolutionRecovery",
    "conditionAtReceipt",
    "conditionAtReturn",
    "returnedAt",
    "returnShipment",
    "results",
    "overrides",
    "flags",
    "ledgerHeadSeq",
    "ledgerHeadHash",
]


# A report written despite the books differing from the ledger: this column comes first,
# and its first rows say every discrepancy, before any specimen.
DISCREPANCY = "booksDifferFromLedger"


def columns(report: ReturnReport) -> list[str]:
    """The report's columns (one more, first, when it lists discrepancies)."""
    return [DISCREPANCY, *COLUMNS] if report.discrepancies else COLUMNS


def _fate_mass(entry: SpecimenEntry, status: str) -> float:
    return round(sum(p.left_mg for p in entry.powders if p.status == status), 6)


def _result(r: ResultEntry) -> str:
    """``87/86 0.707880 ± 0.000019 (2SD, n=3) on <scale>``: written by the precision rules."""
    return f"{r.ratio} {precision.result(r.kind, r.value, r.two_sd, r.n)} on {r.scale}"


def rows(report: ReturnReport) -> list[dict[str, Any]]:
    lines: list[dict[str, Any]] = [{DISCREPANCY: d.said} for d in report.discrepancies]
    for s in report.specimens:
        lines.append(
            {
                "loanReference": report.loan["reference"],
                "lender": report.lender["name"],
                "institutionCode": s.institution_code,
                "catalogNumber": s.catalog_number,
                "trackerId": s.id,
                "scientificName": s.scientific_name,
                "element": s.skeletal_element,
                "sampled": s.sampled,
                "massRemovedMg": round(s.drilled_mg, 6),
                "massRemovedUncertaintyMg": round(s.drilled_u_mg, 6),
                "permittedMg": s.permitted_mg,
                "powderDissolvedMg": round(sum(p.dissolved_mg for p in s.powders), 6),
                "powderReturnedMg": _fate_mass(s, "returned"),
                "powderDestroyedMg": _fate_mass(s, "destroyed"),
                "powderRetainedMg": _fate_mass(s, "retained"),
                "powderConsumedMg": _fate_mass(s, "consumed"),
                "powderStillHeldMg": _fate_mass(s, "available"),
                "residualSolutions": "; ".join(f"{x.id} {x.status}" for x in s.solutions),
                "dissolutionRecovery": "; ".join(
                    f"{x.id} {recovery_words(r.as_recovery())}"
                    for x in s.solutions
                    for r in x.recoveries
                ),
                "conditionAtReceipt": s.condition_in,
                "conditionAtReturn": s.condition_out,
                "returnedAt": iso_utc(s.returned_at) if s.returned_at else None,
                "returnShipment": s.return_shipment,
                "results": "; ".join(_result(r) for r in s.results),
                "overrides": "; ".join(p.override_reason for p in s.powders if p.override_reason),
                "flags": "; ".join(s.flags),
                "ledgerHeadSeq": report.ledger.seq,
                "ledgerHeadHash": report.ledger.hash,
            }
        )
    return lines
