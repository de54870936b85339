"""The benchmark report as Markdown tables, for the README's performance section.

Built from the same report the terminal table shows (``Report.as_dict()``), so the README
says exactly what a run printed: every figure, its floor and ratio, the targets, the growth
across scales and the machine.
"""

from __future__ import annotations

from typing import Any

MET = {True: "✓ met", False: "✗ missed", None: "report only"}


def markdown(report: dict[str, Any], command: str) -> str:
    """Markdown for a report: the figures, the growth table, the machine and the command."""
    parts = [_figures(report), _growth(report), _machine(report, command)]
    return "\n\n".join(p for p in parts if p) + "\n"


def _value(value: float, unit: str) -> str:
    return f"{value:.3f} {unit}" if unit in ("s", "ms") else f"{value:,.1f} {unit}"


def _figures(report: dict[str, Any]) -> str:
    rows = [
        "| figure | scale | measured | floor | ratio | target | met |",
        "|---|---|---|---|---|---|---|",
    ]
    for f in report["figures"]:
        problems = "".join(f"; ✗ {p}" for p in f["problems"])
        rows.append(
            f"| {f['title']} (floor: {f['floor_title']}) | {f['scale']:g} | "
            f"{_value(f['measured'], f['unit'])} | {_value(f['floor'], f['unit'])} | "
            f"{f['ratio']:.2f} | {f['target']} | {MET[f['met']]}{problems} |"
        )
    for s in report["skipped"]:
        rows.append(f"| {s['key']}: skipped, {s['reason']} | {s['scale']:g} | | | | | skipped |")
    return "\n".join(rows)


def _growth(report: dict[str, Any]) -> str:
    if not report["growth"]:
        return ""
    scales = sorted({float(k) for g in report["growth"] for k in g["values"]})
    head = " | ".join(f"scale {s:g}" for s in scales)
    rows = [f"| growth of | {head} | exponent | verdict |", "|---" * (len(scales) + 3) + "|"]
    for g in report["growth"]:
        cells = " | ".join(
            _value(g["values"][f"{s:g}"], g["unit"]) if f"{s:g}" in g["values"] else ""
            for s in scales
        )
        rows.append(f"| {g['title']} | {cells} | {g['exponent']:.2f} | {g['verdict']} |")
    return "\n".join(rows)


def _machine(report: dict[str, Any], command: str) -> str:
    m = report["machine"]
    return (
        f"Measured on {m['cores']} cores ({m['cpu']}), {m['ram_gb']} GB RAM, {m['system']}, "
        f"Python {m['python']}, SQLite {m['sqlite']}; load average at the end {m['load']}. "
        f"Each figure is the best of its runs; ratio = measured / floor (for rates, floor / "
        f"measured). Reproduce with `{command}`."
    )
