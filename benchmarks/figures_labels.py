"""1,000 labels to a PDF sheet, against encoding their 1,000 QR matrices alone.

The figure is what ``tracker labels print`` does for a queue of 1,000 labels short of
recording the job: each label's facts read from the database, laid out on an A4 sheet
stock and drawn as a vector PDF. The floor only encodes the same 1,000 symbols (the same
payloads, the same error-correction level) with one fixed mask, as a bare encoder would:
tracker's encoder scores all eight masks for each symbol (as ISO/IEC 18004 asks, from
memory), so that cost shows in the ratio rather than hiding in the floor.
"""

from __future__ import annotations

from benchmarks.figures_read import raw_rows
from benchmarks.measure import Figure, Target, best_of, timed
from tracker.db.database import Database
from tracker.domain.labels import LabelFacts
from tracker.output import qr
from tracker.output.layout import lay_out
from tracker.output.pdf import render_pdf
from tracker.output.stocks import load_stock
from tracker.services.labels import handling

COUNT = 1000
STOCK = "a4-65"


def labels_figure(db: Database, repeat: int) -> Figure:
    query = f"SELECT item_ref FROM label WHERE status = 'queued' ORDER BY id LIMIT {COUNT}"
    items = [row[0] for row in raw_rows(db, query)]
    stock = load_stock(STOCK, None)
    kept: dict[str, object] = {}

    def measured() -> float:
        def run() -> None:
            facts = handling.facts_for(db, items)
            pages = lay_out(stock, facts)
            kept["pdf"] = render_pdf(stock, pages, "tracker labels, benchmark")
            kept["facts"] = facts

        return timed(run)

    payloads = [f.payload for f in handling.facts_for(db, items)]

    floors: dict[str, list[int]] = {}

    def floor() -> float:
        return timed(lambda: floors.update(versions=_fixed_mask(payloads, stock.error_correction)))

    took, bare = best_of(repeat, measured, floor)
    title, floor_title = (
        f"{len(items):,} labels to PDF ({STOCK})",
        f"the {len(items):,} QR matrices alone, one fixed mask",
    )
    figure = Figure("labels", title, "s", took, bare, floor_title, Target(most=5.0, ratio_most=2.0))
    facts = kept["facts"]
    assert isinstance(facts, list) and all(isinstance(f, LabelFacts) for f in facts)
    pdf = kept["pdf"]
    assert isinstance(pdf, bytes)
    figure.notes.append(f"{len(pdf) / 1e6:.1f} MB PDF")
    if len(facts) != COUNT:
        figure.problems.append(f"only {len(facts)} labels were queued")
    ours = [qr.encode(p, stock.error_correction).version for p in payloads]
    if ours != floors["versions"]:
        figure.problems.append("the floor's symbols are of other versions than tracker's")
    figure.compared = "the same payloads, each symbol of the same version"
    return figure


def _fixed_mask(payloads: list[str], level: str) -> list[int]:
    """Each payload encoded with mask 0, without scoring the eight masks; the versions."""
    import qrcode
    import qrcode.constants

    correction = getattr(qrcode.constants, f"ERROR_CORRECT_{level}")
    versions = []
    for payload in payloads:
        code = qrcode.QRCode(error_correction=correction, border=0, mask_pattern=0)
        code.add_data(payload)
        code.make(fit=True)
        versions.append(int(code.version))
    return versions
