"""PNG figures for reports: the bracketing standard's drift and δ against age.

matplotlib is imported lazily with the non-interactive Agg backend, so the tool never
needs a display (and `tracker --help` never pays for the import).
"""

from __future__ import annotations

import io
from typing import Any

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


def _png(plt: Any, figure: Any) -> bytes:
    buffer = io.BytesIO()
    figure.tight_layout()
    figure.savefig(buffer, format="png")
    plt.close(figure)
    return buffer.getvalue()
