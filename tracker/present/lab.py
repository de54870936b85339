"""The lab's work as people see it: column batches, session reductions, results, Sr screening.

A result's value and 2SD are written by ``domain/precision.py`` (the 2SD decides the places),
in the CLI's tables and the interface's session screen alike (:func:`result_cells`).
"""

from __future__ import annotations

from rich.console import Group, RenderableType
from rich.text import Text

from tracker.domain import precision
from tracker.domain.text_rules import visible
from tracker.present.bars import flag_lines
from tracker.present.text import plain_table
from tracker.services.bench.chemistry import RemovedPositionView
from tracker.services.bench.columns import BatchSummary, PositionLine, RemovedLine
from tracker.services.instrument.reduction import Reduction, ResultLine
from tracker.services.instrument.results import SpecimenResult
from tracker.services.instrument.run_matching import MatchedRow, NamesMatched
from tracker.services.instrument.screening import CurveView, Screening

BLANK_SHARE_PLACES = 2  # a blank is a small share of a column: 0.19 %, not 0.2 %
AGE_PLACES = 2  # an age the curve allows, in Ma: the screening's own places (as before)


def limits_text(summary: BatchSummary) -> str:
    """A batch's acceptance limits and its procedural blank, in words."""
    if summary.blank_ng is None:
        blank = "no blank measured"
    else:
        spread = f", SD {precision.nanograms(summary.blank_sd_ng)}" if summary.blank_sd_ng else ""
        blank = f"blank {precision.nanograms(summary.blank_ng)} (n = {summary.blanks}{spread})"
    return (
        f"yield ≥ {precision.as_given(summary.yield_threshold * 100)} %, blank ≤ "
        f"{precision.as_given(summary.blank_limit * 100)} %; {blank}"
    )


def position_cells(line: PositionLine) -> tuple[str, str, str, str]:
    """Loaded, recovered, yield and blank share of one column position, with units."""
    return (
        precision.micrograms(line.loaded_ug),
        precision.micrograms(line.recovered_ug),
        precision.percent(line.yield_fraction, line.yield_u),
        precision.percent(line.blank_fraction, places=BLANK_SHARE_PLACES),
    )


def holds_text(holds: str | None, catalog_number: str | None) -> str:
    """What a column holds, with the specimen a sample came from: ``AQ-00001-F (KFM P 1001)``."""
    if not holds:
        return "—"
    return f"{holds} ({catalog_number})" if catalog_number else holds


def batch_table(summary: BatchSummary) -> RenderableType:
    head = Text.assemble(
        (visible(summary.name), "bold"),
        f"  {summary.id}  {summary.element}; {limits_text(summary)}",
    )
    table = plain_table("column", "holds", "loaded → recovered", "yield", "blank", "flags", whole=2)
    for line in summary.positions:
        loaded, recovered, yield_text, share = position_cells(line)
        table.add_row(
            Text.assemble(f"{line.slot}. {line.id}\n", (f"{line.kind}", "dim")),
            visible(holds_text(line.holds, line.catalog_number)),
            f"{loaded} → {recovered}",
            yield_text,
            share,
            flag_lines(line.flags),
        )
    if not summary.removed:
        return Group(head, table)
    return Group(head, table, removed_text(summary.removed))


def removed_text(removed: list[RemovedLine]) -> Text:
    """The columns taken off a batch as scanned by mistake, one line each, with the reason."""
    text = Text()
    for line in removed:
        text.append("\n" if text else "")
        text.append(f"removed: column {line.slot} {line.id} ", style="dim")
        text.append(visible(f"{line.kind} {holds_text(line.holds, line.catalog_number)}"))
        text.append(f" on {line.removed_at.date().isoformat()}: ", style="dim")
        text.append(visible(line.reason))
    return text


def position_removed(item: RemovedPositionView) -> str:
    """What removing a column did, in one line (the CLI's answer and the interface's)."""
    holds = holds_text(item.holds, item.catalog_number)
    again = f"; {item.holds} is available again" if item.kind == "sample" and item.holds else ""
    labels = f"; {item.labels_cancelled} queued label(s) cancelled" if item.labels_cancelled else ""
    return (
        f"{item.id} ({item.kind} {holds}) taken off {item.batch}: "
        f"column {item.slot} is free{again}{labels}"
    )


def result_value(kind: str, value: float, two_sd: float | None, n: int | None = None) -> str:
    """One result in the house notation (``+0.88 ± 0.15 ‰ (2SD, n=4)``)."""
    return precision.result(kind, value, two_sd, n)


def reduction_table(reduction: Reduction) -> RenderableType:
    """One row per target, one column per ratio: value ± 2SD (n); checks and flags merged."""
    head = Text.assemble(
        (visible(reduction.name), "bold"),
        f"  {reduction.session}  on the {reduction.scale} scale; "
        f"{reduction.unmatched} unmatched rows\n",
        (
            "session flags: " + (", ".join(reduction.flags) or "none"),
            "bold red" if reduction.flags else "green",
        ),
    )
    ratios = list(dict.fromkeys(r.ratio for r in reduction.results))
    table = plain_table("target", *ratios, "check", "flags")
    rows: dict[str, dict[str, ResultLine]] = {}
    for line in reduction.results:
        rows.setdefault(line.target, {})[line.ratio] = line
    for target, by_ratio in rows.items():
        first = next(iter(by_ratio.values()))
        cells = [_value_cell(by_ratio.get(r), reduction.mode) for r in ratios]
        checks = [
            f"{r} {'pass' if x.passed else 'FAIL'}"
            for r, x in by_ratio.items()
            if x.passed is not None
        ]
        flags = sorted({f for x in by_ratio.values() for f in x.flags})
        table.add_row(
            Text.assemble(f"{target}\n", (visible(first.label), "dim")),
            *cells,
            "\n".join(checks) or precision.ABSENT,
            flag_lines(flags),
        )
    return Group(head, table)


def _value_cell(line: ResultLine | None, mode: str) -> str:
    return precision.ABSENT if line is None else result_value(mode, line.value, line.two_sd, line.n)


def accepted_text(line: ResultLine, mode: str) -> str:
    """A reference material's accepted value and its 2SD, written as its results are."""
    if line.accepted is None:
        return precision.ABSENT
    if mode == "delta":
        return precision.delta(line.accepted, line.accepted_two_sd)
    return precision.ratio(line.accepted, line.accepted_two_sd)


def result_cells(kind: str, value: float, two_sd: float | None) -> tuple[str, str]:
    """A result's value (with ‰ for a δ) and its 2SD as two table cells, at one place."""
    shown, spread = precision.result_pair(kind, value, two_sd)
    unit = " ‰" if kind == "delta" else ""
    return shown + unit, precision.ABSENT if spread is None else spread


def specimen_result_cells(row: SpecimenResult) -> tuple[str, str, str, str]:
    """A result's ratio, value and 2SD (each with its unit: ‰ for a δ, none for a ratio)
    and n, as cells; the 2SD decides the places, and a 2SD that rounds away is left out."""
    value, spread = precision.result_pair(row.kind, row.value, row.two_sd)
    unit = " ‰" if row.kind == "delta" else ""
    two_sd = precision.reported_spread(spread, unit, row.uncertainty)
    return row.ratio, value + unit, two_sd, str(row.n)


FACTOR_PLACES = 4  # k of a mass-dependent law, as it is usually quoted (2.0483)


def results_table(rows: list[SpecimenResult]) -> RenderableType:
    """Results per specimen, in the CLI's ``results`` and on a loan's Results tab alike; a δ
    put on another ratio says so under its ratio, and a note under the table says how."""
    if not rows:
        return Text("No results yet: import and reduce an instrument session.")
    table = plain_table("specimen", "ratio", "value", "2SD", "n", "scale", "flags", whole=2)
    for r in rows:
        ratio, *cells = specimen_result_cells(r)
        table.add_row(
            Text.assemble(f"{r.specimen}\n", (visible(r.catalog_number), "dim")),
            Text.assemble(ratio, (f"\n← {r.converted_from}", "dim") if r.converted_from else ""),
            *cells,
            visible(r.scale),
            flag_lines(r.flags),
        )
    notes = dict.fromkeys(conversion_note(r) for r in rows if r.converted_from)
    if any(r.uncertainty == "long-term" for r in rows):
        notes[precision.LONG_TERM_NOTE] = None
    return Group(table, Text("\n".join(notes))) if notes else table


def conversion_note(row: SpecimenResult) -> str:
    """How a δ came to be on a ratio it was not measured on, in one line."""
    k = precision.number(row.factor or 0.0, FACTOR_PLACES)
    return f"← δ{row.ratio} converted from δ{row.converted_from}, {row.law} law, k = {k}"


def curve_text(curve: CurveView) -> Text:
    """Which curve a loan is screened against, and the ages it covers."""
    span = f"{precision.as_given(curve.youngest_ma)}–{precision.as_given(curve.oldest_ma)} Ma"
    return Text.assemble(
        "screened against ", (visible(curve.name), "bold"), f" ({span}, {curve.points} points)"
    )


VERDICT_MARKS = {True: ("✓", "green"), False: ("✗", "bold red"), None: ("?", "yellow")}


def screening_text(lines: list[Screening]) -> Text:
    """Each specimen's verdict in the service's words, its measured ⁸⁷Sr/⁸⁶Sr, what the
    loan's curve expects at its stated age, and the ages the curve allows for the measured
    ratio: four lines a specimen, in the CLI's ``screen`` and on a loan's Sr screening tab
    alike (80 columns hold them; a table of six columns would not)."""
    if not lines:
        return Text("No ⁸⁷Sr/⁸⁶Sr results for this loan yet.")
    text = Text()
    for number, s in enumerate(lines):
        mark, style = VERDICT_MARKS[s.consistent]
        if number:
            text.append("\n")
        text.append(s.specimen, "bold")
        text.append(f"  {visible(s.catalog_number)}  ", "dim")
        text.append(f"{mark} {s.verdict}\n", style)
        measured = precision.result("ratio", s.ratio, s.two_sd, s.n)
        text.append(f"  {'⁸⁷Sr/⁸⁶Sr measured':<25}{measured}\n")
        stated = _age_range(s.age_min_ma, s.age_max_ma)
        text.append(f"  {'curve at its stated age':<25}{_expected(s)} ({stated})\n")
        text.append(f"  {'ages the curve allows':<25}{_allowed(s.intervals_ma)}\n")
    return text


def _age_range(youngest: float | None, oldest: float | None) -> str:
    """A stated (stratigraphic) age range as it was set, in Ma."""
    if youngest is None or oldest is None:
        return "no stated age"
    return f"{precision.as_given(youngest)}–{precision.as_given(oldest)} Ma"


def _expected(s: Screening) -> str:
    """The curve's ⁸⁷Sr/⁸⁶Sr ± 2u over the stated ages, at a ratio's places."""
    if s.expected_low is None or s.expected_high is None:
        return "none" if s.age_min_ma is None else "none (the curve does not reach it)"
    return f"{precision.ratio(s.expected_low)}–{precision.ratio(s.expected_high)}"


def _allowed(intervals: list[tuple[float, float]]) -> str:
    """The ages the curve allows for the measured ratio, in Ma (several where it turns)."""
    if not intervals:
        return "none (the ratio is outside the curve)"
    spans = "; ".join(
        f"{precision.number(a, AGE_PLACES)}–{precision.number(b, AGE_PLACES)}" for a, b in intervals
    )
    return f"{spans} Ma"


def matched_line(row: MatchedRow) -> str:
    """One matched instrument row, as both front ends say it."""
    what = {"sample": "a run of", "reference": "a run of", "blank": "a procedural blank,"}
    if row.target is None:
        said = f"the bracketing standard ({row.label})"
    else:
        said = f"{what.get(row.role, 'a run of')} {row.target}, {row.label}"
    return visible(f"run {row.run_order} ({row.sample_name!r}) is {said}")


def names_matched_lines(answer: NamesMatched) -> list[str]:
    """What matching by name did: each row matched, each row left and why, then what next."""
    lines = [f"{len(answer.matched)} row(s) matched, {len(answer.unmatched)} left unmatched"]
    lines += [f"  ✓ {matched_line(row)}" for row in answer.matched]
    lines += [
        visible(f"  · run {row.run_order} ({row.sample_name!r}) {row.reason}")
        for row in answer.unmatched
    ]
    return lines
