"""PNG figures for reports: the bracketing standard's drift, δ against age, and a reference
material's control chart.

matplotlib is imported lazily with the non-interactive Agg backend, so the tool never
needs a display (and `tracker --help` never pays for the import).
"""

from __future__ import annotations

import io
from typing import Any

from tracker.services.instrument.reproducibility import ControlChart
from tracker.services.instrument.results import SpecimenResult
from tracker.services.instrument.sessions import DriftSeries

WIDTH_IN, HEIGHT_IN, DPI = 7.0, 4.0, 150


def _pyplot() -> Any:
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    return plt


def drift_png(series: DriftSeries) -> bytes:
    """Each ratio of the standard as ‰ deviation from its session mean, against run number."""
    plt = _pyplot()
    figure, axes = plt.subplots(figsize=(WIDTH_IN, HEIGHT_IN), dpi=DPI)
    for name, values in series.ratios.items():
        mean = sum(values) / len(values)
        axes.plot(
            series.runs,
            [(v / mean - 1) * 1000 for v in values],
            marker="o",
            label=f"{name} ({series.standard})",
        )
    axes.axhline(0.0, color="grey", linewidth=0.8)
    axes.set_xlabel("run number")
    axes.set_ylabel("deviation from session mean (‰)")
    axes.set_title(f"Bracketing standard drift — {series.name} ({series.session})")
    axes.legend()
    return _png(plt, figure)


def delta_vs_age_png(results: list[SpecimenResult], ratio: str) -> bytes:
    """δ (± 2SD) against stratigraphic mid-age (± half the age range), one point per result;
    a δ converted from another ratio is drawn hollow, and a legend says so."""
    plt = _pyplot()
    figure, axes = plt.subplots(figsize=(WIDTH_IN, HEIGHT_IN), dpi=DPI)
    dated = [
        r
        for r in results
        if r.ratio == ratio and r.age_min_ma is not None and r.age_max_ma is not None
    ]
    if not dated:
        raise ValueError(f"no {ratio} results with a stratigraphic age to plot")
    measured = [r for r in dated if r.converted_from is None]
    converted = [r for r in dated if r.converted_from is not None]
    for drawn, style, label in (
        (measured, {"fmt": "o"}, "measured"),
        (converted, {"fmt": "o", "mfc": "none"}, "converted from another ratio"),
    ):
        if drawn:
            _age_points(axes, drawn, label if converted else None, style)
    if converted:
        axes.legend()
    unit = "‰" if dated[0].kind == "delta" else ""
    axes.set_xlabel("stratigraphic age (Ma)")
    axes.set_ylabel(f"δ{ratio} {unit} ({dated[0].scale})" if unit else f"{ratio}")
    axes.invert_xaxis()
    axes.set_title(f"{ratio} against age ({len(dated)} results)")
    return _png(plt, figure)


def _age_points(
    axes: Any, dated: list[SpecimenResult], label: str | None, style: dict[str, str]
) -> None:
    """Results at their stratigraphic mid-age (± half the range), δ ± 2SD."""
    axes.errorbar(
        [(r.age_min_ma + r.age_max_ma) / 2 for r in dated],  # type: ignore[operator]
        [r.value for r in dated],
        xerr=[(r.age_max_ma - r.age_min_ma) / 2 for r in dated],  # type: ignore[operator]
        yerr=[r.two_sd or 0.0 for r in dated],
        capsize=3,
        label=label,
        **style,
    )


def control_chart_png(chart: ControlChart) -> bytes:
    """Each session's mean ± its 2SD, in session order, against the lab's long-term mean and
    ± 2SD (solid and dotted) and the accepted value (dashed); sessions found outside the
    limits the others set are drawn in red."""
    plt = _pyplot()
    figure, axes = plt.subplots(figsize=(WIDTH_IN, HEIGHT_IN), dpi=DPI)
    numbered = list(enumerate(chart.points, start=1))
    for outside, colour, label in (
        (False, "tab:blue", "session mean ± 2SD"),
        (True, "tab:red", "outside the others' limits"),
    ):
        drawn = [(n, p) for n, p in numbered if (p.within is False) == outside]
        if drawn:
            axes.errorbar(
                [n for n, _ in drawn],
                [p.value for _, p in drawn],
                yerr=[p.two_sd or 0.0 for _, p in drawn],
                fmt="o",
                capsize=3,
                color=colour,
                label=label,
            )
    if chart.long_term_mean is not None and chart.long_term_two_sd is not None:
        axes.axhline(chart.long_term_mean, color="grey", linewidth=1, label="long-term mean")
        for side in (-1, 1):
            axes.axhline(
                chart.long_term_mean + side * chart.long_term_two_sd,
                color="grey",
                linestyle=":",
                label="long-term ± 2SD" if side > 0 else None,
            )
    if chart.accepted is not None:
        axes.axhline(chart.accepted, color="black", linestyle="--", label="accepted value")
    name = f"δ{chart.ratio} (‰, {chart.scale} scale)" if chart.kind == "delta" else chart.ratio
    axes.set_xticks([n for n, _ in numbered], [p.session for _, p in numbered], rotation=30)
    axes.set_xlabel("session (oldest first)")
    axes.set_ylabel(name)
    axes.set_title(f"{chart.reference}: {len(chart.points)} sessions")
    axes.legend(fontsize="small")
    return _png(plt, figure)


def _png(plt: Any, figure: Any) -> bytes:
    buffer = io.BytesIO()
    figure.tight_layout()
    figure.savefig(buffer, format="png")
    plt.close(figure)
    return buffer.getvalue()
