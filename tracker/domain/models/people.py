"""Who does things (operators), where things are (locations) and who lends them (lenders)."""

from __future__ import annotations

from datetime import datetime
from typing import TYPE_CHECKING

from sqlalchemy import ForeignKey, String, UniqueConstraint
from sqlalchemy.orm import Mapped, mapped_column, relationship

from tracker.domain.base import Base, HasPublicId
from tracker.domain.ids import Kind
from tracker.domain.models.enums import LocationKind, Role, enum_type

if TYPE_CHECKING:
    from tracker.domain.models.loans import Loan


class Operator(HasPublicId, Base):
    """A person who records events. ``code`` is what they type after ``--as``.

    ``login`` is the PostgreSQL login bound to this person on a shared database: writes
    made through that login record as this operator and no other (see tracker/db/logins.py).
    SQLite files have no logins and leave it empty.
    """

    __tablename__ = "operator"
    id_kind = Kind.OPERATOR

    id: Mapped[int] = mapped_column(primary_key=True)
    code: Mapped[str] = mapped_column(String(32), unique=True)
    name: Mapped[str] = mapped_column(String(200))
    role: Mapped[Role] = mapped_column(enum_type(Role))
    active: Mapped[bool] = mapped_column(default=True)
    created_at: Mapped[datetime]
    login: Mapped[str | None] = mapped_column(String(63), unique=True)  # PostgreSQL role name

    @property
    def initials(self) -> str:
        return "".join(part[0] for part in self.name.split() if part).upper()[:3]


class Location(HasPublicId, Base):
    """A place in a tree: building / room / cabinet / shelf / box / position."""

    __tablename__ = "location"
    __table_args__ = (UniqueConstraint("parent_id", "name"),)
    id_kind = Kind.LOCATION

    id: Mapped[int] = mapped_column(primary_key=True)
    parent_id: Mapped[int | None] = mapped_column(ForeignKey("location.id"), index=True)
    kind: Mapped[LocationKind] = mapped_column(enum_type(LocationKind))
    name: Mapped[str] = mapped_column(String(120))
    created_at: Mapped[datetime]

    parent: Mapped[Location | None] = relationship(remote_side=[id], lazy="joined", join_depth=6)

    @property
    def path(self) -> str:
        """Human path from the root, e.g. "Hall B / 2.14 / Cabinet 3 / Box 7"."""
        parts: list[str] = []
        node: Location | None = self
        while node is not None:
            parts.append(node.name)
            node = node.parent
        return " / ".join(reversed(parts))


class Lender(HasPublicId, Base):
    """An institution that lends specimens (a museum, a survey, an agency)."""

    __tablename__ = "lender"
    id_kind = Kind.LENDER

    id: Mapped[int] = mapped_column(primary_key=True)
    name: Mapped[str] = mapped_column(String(200), unique=True)
    institution_code: Mapped[str | None] = mapped_column(String(40))  # Darwin Core institutionCode
    contact_name: Mapped[str | None] = mapped_column(String(200))
    contact_email: Mapped[str | None] = mapped_column(String(200))
    address: Mapped[str | None] = mapped_column(String(500))
    created_at: Mapped[datetime]

    loans: Mapped[list[Loan]] = relationship(back_populates="lender", order_by="Loan.id")
