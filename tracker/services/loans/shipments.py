"""Parcels to and from the lender, and photographs of specimens at receipt and return.

A return is its own set of custody events: the outgoing shipment is recorded first,
then each specimen and each powder vial is returned *in* it, so the lender's report
can say which parcel carried what.
"""

from __future__ import annotations

import io
import mimetypes
import warnings
from datetime import date
from typing import Annotated, Literal

from pydantic import Field
from sqlalchemy import select
from sqlalchemy.orm import Session

from tracker.db.database import Database
from tracker.domain.errors import InputError, RuleViolation
from tracker.domain.models import (
    Loan,
    LoanStatus,
    Shipment,
    ShipmentDirection,
    Specimen,
    SpecimenPhoto,
)
from tracker.domain.photos import MAX_PHOTO_PIXELS, PHOTO_FORMATS, photo_pixels_problem
from tracker.domain.timing import Since
from tracker.services.core.common import action_time, checked_in, finish, loan_began
from tracker.services.core.inputs import AwareDatetime, Raw, Request, Text, parse
from tracker.services.core.lookup import get_by_id, get_loan
from tracker.services.core.uow import unit_of_work
from tracker.services.core.views import DocumentView, Done, View
from tracker.services.loans.amendments import Upload, store_document


class ShipmentView(View):
    id: str
    loan: str
    direction: str
    shipped_on: date
    carrier: str | None
    tracking: str | None


class NewShipment(Request):
    loan: str
    direction: ShipmentDirection
    shipped_on: date
    carrier: Annotated[str, Field(max_length=120)] | None = None
    tracking: Annotated[str, Field(max_length=120)] | None = None
    notes: Text | None = None


def add_shipment(db: Database, actor: str | None, data: NewShipment | Raw) -> Done[ShipmentView]:
    """Record a parcel for a loan (incoming from the lender, or outgoing back to it)."""
    request = parse(NewShipment, data)
    with unit_of_work(db, actor) as uow:
        loan = get_loan(uow.session, "loan", request.loan)
        if request.shipped_on > uow.now.date():
            raise InputError("shipped-on", request.shipped_on.isoformat(), "is in the future")
        if request.direction is ShipmentDirection.OUTGOING and loan.status is not LoanStatus.OPEN:
            raise RuleViolation("loan", loan.reference, f"is already {loan.status.value}")
        row = Shipment(
            loan_id=loan.id,
            direction=request.direction,
            shipped_on=request.shipped_on,
            carrier=request.carrier,
            tracking=request.tracking,
            notes=request.notes,
            created_at=uow.now,
        )
        uow.session.add(row)
        payload = request.model_dump(mode="json", exclude={"loan"}) | {"loan": loan.public_id}
        return finish(
            uow, "shipment.added", row, payload, lambda: shipment_view(row, loan), parent=loan
        )


def shipment_view(row: Shipment, loan: Loan) -> ShipmentView:
    return ShipmentView(
        id=row.public_id,
        loan=loan.reference,
        direction=row.direction.value,
        shipped_on=row.shipped_on,
        carrier=row.carrier,
        tracking=row.tracking,
    )


class PhotoView(View):
    specimen: str
    stage: str
    document: DocumentView


class AddPhoto(Request):
    specimen: str
    stage: Literal["receipt", "return", "other"]
    photo: Upload
    caption: Annotated[str, Field(max_length=300)] | None = None
    taken_at: AwareDatetime | None = None


def add_photo(db: Database, actor: str | None, data: AddPhoto | Raw) -> Done[PhotoView]:
    """Keep a photograph of a specimen's condition (kept once, by its SHA-256)."""
    request = parse(AddPhoto, data)
    _require_image(request.photo)  # the file alone, before the writer lock
    with unit_of_work(db, actor) as uow:
        specimen = get_by_id(uow.session, Specimen, "specimen", request.specimen)
        document = store_document(uow.session, request.photo, uow.now)
        if any(p.document_id == document.id for p in _photos(uow.session, specimen.id)):
            raise RuleViolation("photo", request.photo.filename, "is already kept for it")
        row = SpecimenPhoto(
            specimen_id=specimen.id,
            document=document,
            stage=request.stage,
            caption=request.caption,
            taken_at=action_time(
                uow, request.taken_at, "taken-at", _photo_after(specimen), books=specimen
            ),
            created_at=uow.now,
        )
        uow.session.add(row)
        view = PhotoView(
            specimen=specimen.public_id,
            stage=request.stage,
            document=DocumentView.of(document, "photo"),
        )
        payload = {
            "stage": request.stage,
            "sha256": document.sha256,
            "filename": document.filename,
            "caption": request.caption,
        }
        return finish(
            uow, "specimen.photographed", specimen, payload, lambda: view, parent=document
        )


def _photo_after(specimen: Specimen) -> list[Since]:
    """A photograph shows the specimen in the lab: after its check-in (before one, after
    its loan began)."""
    if specimen.received_at is None:
        return [loan_began(specimen.loan)]
    return [checked_in(specimen)]


def _require_image(upload: Upload) -> None:
    """The bytes must be a JPEG, PNG, TIFF or WebP photograph within the pixel cap.

    Image.open reads the header only; the size is checked there, before verify() reads
    the rest of the file, and no pixel is decoded. Pillow's own decompression-bomb
    warning is left unsaid (the cap below it says more), and its error, raised for a
    header declaring more than twice its limit, is turned into the same refusal.
    """
    from PIL import Image, UnidentifiedImageError  # Pillow comes with qrcode[pil]

    if mimetypes.guess_type(upload.filename)[0] is None:  # kept with the type its name says
        raise InputError("photo", upload.filename, "has no image file extension")
    bomb = Image.DecompressionBombWarning
    try:
        with (
            warnings.catch_warnings(action="ignore", category=bomb),
            Image.open(io.BytesIO(upload.content)) as image,
        ):
            kind, size = image.format, image.size
            if kind in PHOTO_FORMATS and photo_pixels_problem(*size) is None:
                image.verify()
    except Image.DecompressionBombError:
        declared = 2 * (Image.MAX_IMAGE_PIXELS or 0)
        raise InputError(
            "photo",
            upload.filename,
            f"declares more than {declared:,} pixels; photographs are capped at "
            f"{MAX_PHOTO_PIXELS:,} pixels: keep a smaller copy",
        ) from None
    except (UnidentifiedImageError, OSError, SyntaxError, ValueError):
        raise InputError(
            "photo", upload.filename, "is not a readable image; photos are JPEG, PNG, TIFF or WebP"
        ) from None
    if kind not in PHOTO_FORMATS:
        raise InputError("photo", upload.filename, f"is {kind}; photos are JPEG, PNG, TIFF or WebP")
    problem = photo_pixels_problem(*size)
    if problem is not None:
        raise InputError("photo", upload.filename, problem)


def _photos(session: Session, specimen_id: int) -> list[SpecimenPhoto]:
    query = select(SpecimenPhoto).where(SpecimenPhoto.specimen_id == specimen_id)
    return list(session.scalars(query))
