"""Rich renderings of column batches, session reductions, results and Sr screening."""

from rich.console import Group, RenderableType
from rich.text import Text

from tracker.cli.render import plain_table
from tracker.domain.text_rules import visible
from tracker.services.bench.columns import BatchSummary
from tracker.services.instrument.reduction import Reduction, ResultLine
from tracker.services.instrument.results import SpecimenResult
from tracker.services.instrument.screening import Screening


def _flags(flags: list[str]) -> str:
    return "\n".join(flags) or "ok"


def _pm(value: float | None, digits: int = 3) -> str:
    return "—" if value is None else f"{value:.{digits}f}"


def batch_table(summary: BatchSummary) -> RenderableType:
    blank = (
        "no blank measured"
        if summary.blank_ng is None
        else f"blank {summary.blank_ng:.1f} ng (n = {summary.blanks}"
        + (f", SD {summary.blank_sd_ng:.1f} ng)" if summary.blank_sd_ng else ")")
    )
    head = Text.assemble(
        (visible(summary.name), "bold"),
        f"  {summary.id}  {summary.element}; ",
        f"yield ≥ {summary.yield_threshold * 100:g} %, blank ≤ "
        f"{summary.blank_limit * 100:g} %; {blank}",
    )
    table = plain_table("column", "holds", "loaded → recovered", "yield", "blank", "flags")
    table.columns[1].no_wrap = True
    for line in summary.positions:
        share = "—" if line.blank_fraction is None else f"{line.blank_fraction * 100:.2f} %"
        yield_text = (
            "—"
            if line.yield_fraction is None
            else f"{line.yield_fraction * 100:.1f} ± {(line.yield_u or 0) * 100:.1f} %"
        )
        moved = f"{_pm(line.loaded_ug, 2)} → {_pm(line.recovered_ug, 2)} µg"
        table.add_row(
            Text.assemble(f"{line.slot}. {line.id}\n", (f"{line.kind}", "dim")),
            line.holds or "",
            moved,
            yield_text,
            share,
            _flags(line.flags),
        )
    return Group(head, table)


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
    unit = " ‰" if reduction.mode == "delta" else ""
    digits = 3 if reduction.mode == "delta" else 6
    table = plain_table("target", *[f"{r}{unit} ± 2SD (n)" for r in ratios], "check", "flags")
    rows: dict[str, dict[str, ResultLine]] = {}
    for line in reduction.results:
        rows.setdefault(line.target, {})[line.ratio] = line
    for target, by_ratio in rows.items():
        first = next(iter(by_ratio.values()))
        cells = [_value_cell(by_ratio.get(r), digits) for r in ratios]
        checks = [
            f"{r} {'pass' if x.passed else 'FAIL'}"
            for r, x in by_ratio.items()
            if x.passed is not None
        ]
        flags = sorted({f for x in by_ratio.values() for f in x.flags})
        table.add_row(
            Text.assemble(f"{target}\n", (visible(first.label), "dim")),
            *cells,
            "\n".join(checks) or "—",
            _flags(flags),
        )
    return Group(head, table)


def _value_cell(line: ResultLine | None, digits: int) -> str:
    if line is None:
        return "—"
    spread = "" if line.two_sd is None else f" ± {line.two_sd:.{digits}f}"
    return f"{line.value:+.{digits}f}{spread} ({line.n})"


def results_table(rows: list[SpecimenResult]) -> RenderableType:
    if not rows:
        return Text("No results yet: import and reduce an instrument session.")
    table = plain_table("specimen", "ratio", "value", "2SD", "n", "scale", "flags")
    for r in rows:
        digits = 3 if r.kind == "delta" else 6
        table.add_row(
            Text.assemble(f"{r.specimen}\n", (visible(r.catalog_number), "dim")),
            r.ratio,
            _pm(r.value, digits),
            _pm(r.two_sd, digits),
            str(r.n),
            r.scale,
            _flags(r.flags),
        )
    return table


def screen_table(lines: list[Screening]) -> RenderableType:
    if not lines:
        return Text("No ⁸⁷Sr/⁸⁶Sr results for this loan yet.")
    table = plain_table("specimen", "87Sr/86Sr", "curve allows (Ma)", "strata (Ma)", "verdict")
    for s in lines:
        allowed = "; ".join(f"{a:.2f}–{b:.2f}" for a, b in s.intervals_ma) or "none"
        strata = "—" if s.age_min_ma is None else f"{s.age_min_ma:g}–{s.age_max_ma:g}"
        table.add_row(
            Text.assemble(f"{s.specimen}\n", (visible(s.catalog_number), "dim")),
            f"{s.ratio:.6f}",
            allowed,
            strata,
            s.verdict,
        )
    return table
