"""A reference material's control chart as text: one line per session, for the CLI's
``tracker reference chart`` and the interface alike.

Each line draws where the session's mean fell against the limits the other sessions set
(their mean ± 2SD): ``[`` and ``]`` are the limits, ``●`` the session, ``◀``/``▶`` a
session beyond the strip's edge.
"""

from __future__ import annotations

from rich.console import Group, RenderableType
from rich.text import Text

from tracker.domain import precision
from tracker.present.text import plain_table
from tracker.services.instrument.reproducibility import (
    ChartChoice,
    ControlChart,
    ControlPoint,
    ratio_name,
)

STRIP = 21  # characters: the limits sit a quarter in from each end
HALF = 5  # characters from the centre to a limit (one 2SD)
VERDICT = {True: "within", False: "OUTSIDE", None: "not judged"}


def strip(point: ControlPoint) -> str:
    """Where the session's mean lies between the other sessions' limits."""
    if point.others_mean is None or not point.others_two_sd:
        return ""
    centre = STRIP // 2
    cells = ["·"] * STRIP
    cells[centre - HALF], cells[centre + HALF] = "[", "]"
    offset = round((point.value - point.others_mean) / point.others_two_sd * HALF)
    at = centre + offset
    if at < 0:
        cells[0] = "◀"
    elif at >= STRIP:
        cells[-1] = "▶"
    else:
        cells[at] = "●"
    return "".join(cells)


def _value(chart: ControlChart, value: float | None, two_sd: float | None) -> str:
    if value is None:
        return precision.ABSENT
    if chart.kind == "delta":
        return precision.delta(value, two_sd)
    return precision.ratio(value, two_sd)


def choice_label(choice: ChartChoice) -> str:
    """A chart offered to choose: material, ratio, scale and how many sessions it has."""
    sessions = "1 session" if choice.sessions == 1 else f"{choice.sessions} sessions"
    ratio = ratio_name(choice.kind, choice.ratio)
    return f"{choice.reference} · {ratio} · {choice.scale} scale ({sessions})"


def chart_heading(chart: ControlChart) -> Text:
    """What the chart is of, the accepted value and the lab's long-term mean ± 2SD."""
    name = ratio_name(chart.kind, chart.ratio)
    lines = [
        f"{chart.reference}, {name} on the {chart.scale} scale: {len(chart.points)} session(s)",
        f"accepted: {_value(chart, chart.accepted, chart.accepted_two_sd)}",
        "lab's long-term mean ± 2SD: "
        + (
            _value(chart, chart.long_term_mean, chart.long_term_two_sd)
            if chart.long_term_mean is not None
            else f"not yet (needs {chart.min_sessions} sessions)"
        ),
    ]
    return Text("\n".join(lines))


def control_table(chart: ControlChart) -> RenderableType:
    """The heading, then a row per session, oldest first: its day under its ID, so the
    strip and the verdict fit 80 columns whole (the values wrap beside them)."""
    if not chart.points:
        return Text(f"{chart.reference} has no results on {chart.ratio} yet.")
    headers = ("session", "mean ± 2SD", "n", "others' limits", "[ limits ]", "judged")
    table = plain_table(*headers, whole=1)
    for p in chart.points:
        limits = (
            precision.ABSENT
            if p.others_mean is None or p.others_two_sd is None
            else _value(chart, p.others_mean, p.others_two_sd)
        )
        table.add_row(
            f"{p.session}\n{p.day.isoformat()}",
            _value(chart, p.value, p.two_sd),
            str(p.n),
            limits,
            strip(p),
            VERDICT[p.within],
        )
    note = Text(
        f"Each session is judged by the others' mean ± 2SD, once there are "
        f"{chart.min_sessions} others.",
        style="dim",
    )
    return Group(chart_heading(chart), table, note)
