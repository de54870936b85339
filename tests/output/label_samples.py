"""Invented label contents of every kind, with long lines, long IDs and a link prefix."""

from __future__ import annotations

from tracker.domain.ids import Kind, format_id
from tracker.domain.labels import LabelFacts, qr_payload

# Invented link prefixes (example.invalid is reserved by RFC 2606). With a 5- or 6-digit ID
# the short one gives a version 2 symbol, the long one version 3 (qrcode library).
SHORT_PREFIX = "HTTPS://LAB.EXAMPLE/T/"
PREFIX = "HTTPS://LABELS.EXAMPLE.INVALID/ITEM/"

LINES: dict[Kind, tuple[str, ...]] = {
    Kind.SPECIMEN: (
        "FMX Z-00917 (invented catalogue number)",
        "Dentifera imaginaria Fabula 1999",
        "loan FM-2031-077",
    ),
    Kind.POWDER: ("FMX Z-00917", "enameloid · 2.150 mg", "2026-03-04 · QXZ"),
    Kind.SOLUTION: (
        "from PW-00001-5",
        "2 M HNO3 (twice sub-boiled, invented)",
        "1.0000 g",
        "2026-03-05 · QXZ",
    ),
    Kind.ALIQUOT: ("from SO-00001-M", "isotopes · 0.1000 g", "2026-03-06 · QXZ"),
    Kind.POSITION: ("Invented batch with a long name 2026-11 A · column 12", "procedural blank"),
    Kind.CUT: ("Invented batch · column 3", "Ca cut"),
    Kind.REFERENCE_MATERIAL: ("In-house carbonate standard (invented)", "Ca · calcium carbonate"),
    Kind.SHIPMENT: ("loan FM-2031-077", "outgoing · 2026-12-01", "Imaginary Couriers · 1Z999"),
    Kind.LOCATION: ("Powder box 1", "box · Hall Q / Q2.05 prep / Desiccator 3 / Top shelf"),
}


def sample_labels(number: int = 42, prefix: str | None = None) -> list[LabelFacts]:
    """One label per labelled kind; ``number`` sets the ID's digits (more digits, wider IDs)."""
    labels = []
    for kind, lines in LINES.items():
        item = format_id(kind, number)
        labels.append(LabelFacts(item, kind.name.lower(), lines, qr_payload(item, prefix)))
    return labels


def many_labels(count: int, prefix: str | None = None) -> list[LabelFacts]:
    """``count`` labels cycling through the kinds, each with its own ID."""
    kinds = list(LINES)
    labels = []
    for n in range(count):
        kind = kinds[n % len(kinds)]
        item = format_id(kind, 1 + n)
        labels.append(LabelFacts(item, kind.name.lower(), LINES[kind], qr_payload(item, prefix)))
    return labels
