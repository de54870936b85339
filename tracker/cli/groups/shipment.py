"""``tracker shipment``: parcels to and from lenders."""

from datetime import datetime
from typing import Annotated

import typer

from tracker.cli.state import emit, perform
from tracker.domain.models import ShipmentDirection
from tracker.present.text import done
from tracker.services.loans import shipments

Opt = typer.Option

app = typer.Typer(
    help="Parcels to and from lenders.",
    no_args_is_help=True,
    epilog="Example: tracker shipment add NMFI-25-033 --direction outgoing --date 2026-06-12",
)


@app.command(
    "add",
    epilog="Example: tracker shipment add NMFI-25-033 --direction "
    "outgoing --date 2026-06-12 --carrier 'courier' --tracking X123",
)
def shipment_add(
    ctx: typer.Context,
    loan: Annotated[str, typer.Argument(help="Loan ID or reference.")],
    direction: Annotated[ShipmentDirection, Opt("--direction", help="incoming or outgoing.")],
    shipped_on: Annotated[datetime, Opt("--date", formats=["%Y-%m-%d"], help="Day it was sent.")],
    carrier: Annotated[str | None, Opt("--carrier", help="Carrier.")] = None,
    tracking: Annotated[str | None, Opt("--tracking", help="Tracking number.")] = None,
) -> None:
    """Record a parcel; returned specimens and powders then name it (`--shipment`)."""
    request = {
        "loan": loan,
        "direction": direction,
        "shipped_on": shipped_on.date(),
        "carrier": carrier,
        "tracking": tracking,
    }
    answer = perform(ctx, shipments.add_shipment, request)
    emit(ctx, answer, lambda: done(answer, f"{answer.item.id} {direction.value}"))
