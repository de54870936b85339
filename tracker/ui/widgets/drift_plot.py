"""The bracketing standard's drift over a session, drawn in the terminal (textual-plotext)."""

from __future__ import annotations

from textual_plotext import PlotextPlot

from tracker.services.instrument.sessions import DriftSeries


class DriftPlot(PlotextPlot):
    """Each ratio of the bracketing standard against run number, as relative deviation (‰)."""

    def show(self, series: DriftSeries) -> None:
        plt = self.plt
        plt.clear_data()
        plt.clear_figure()
        markers = ["dot", "x", "+", "o"]
        for index, (ratio, values) in enumerate(series.ratios.items()):
            if not values:
                continue
            mean = sum(values) / len(values)
            permil = [(v / mean - 1) * 1000 for v in values]
            plt.scatter(
                series.runs, permil, marker=markers[index % 4], label=f"{ratio} (‰ from mean)"
            )
        plt.title(f"{series.standard}: drift over {series.name}")
        plt.xlabel("run")
        self.refresh()
