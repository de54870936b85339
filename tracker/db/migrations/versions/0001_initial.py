"""Initial schema: the whole lineage, loans and terms, locations, operators, the custody ledger.

Revision ID: 0001_initial
Revises: (none)
Create Date: 2026-12-02 00:47:58.339358
"""

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op


revision: str = "0001_initial"
down_revision: str | None = None
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    op.create_table(
        "document",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("sha256", sa.String(length=64), nullable=False),
        sa.Column("filename", sa.String(length=255), nullable=False),
        sa.Column("media_type", sa.String(length=100), nullable=False),
        sa.Column("size_bytes", sa.Integer(), nullable=False),
        sa.Column("content", sa.LargeBinary(), nullable=False),
        sa.Column("added_at", sa.DateTime(timezone=True), nullable=False),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_document")),
        sa.UniqueConstraint("sha256", name=op.f("uq_document_sha256")),
    )
    op.create_table(
        "lender",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("name", sa.String(length=200), nullable=False),
        sa.Column("institution_code", sa.String(length=40), nullable=True),
        sa.Column("contact_name", sa.String(length=200), nullable=True),
        sa.Column("contact_email", sa.String(length=200), nullable=True),
        sa.Column("address", sa.String(length=500), nullable=True),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_lender")),
        sa.UniqueConstraint("name", name=op.f("uq_lender_name")),
    )
    op.create_table(
        "location",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("parent_id", sa.Integer(), nullable=True),
        sa.Column(
            "kind",
            sa.Enum(
                "building",
                "room",
                "cabinet",
                "freezer",
                "shelf",
                "box",
                "position",
                name="locationkind",
                native_enum=False,
                length=16,
            ),
            nullable=False,
        ),
        sa.Column("name", sa.String(length=120), nullable=False),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.ForeignKeyConstraint(
            ["parent_id"], ["location.id"], name=op.f("fk_location_parent_id_location")
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_location")),
        sa.UniqueConstraint("parent_id", "name", name=op.f("uq_location_parent_id_name")),
    )
    with op.batch_alter_table("location", schema=None) as batch_op:
        batch_op.create_index(batch_op.f("ix_location_parent_id"), ["parent_id"], unique=False)

    op.create_table(
        "operator",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("code", sa.String(length=32), nullable=False),
        sa.Column("name", sa.String(length=200), nullable=False),
        sa.Column(
            "role",
            sa.Enum("technician", "manager", name="role", native_enum=False, length=16),
            nullable=False,
        ),
        sa.Column("active", sa.Boolean(), nullable=False),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_operator")),
        sa.UniqueConstraint("code", name=op.f("uq_operator_code")),
    )
    op.create_table(
        "reference_material",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("name", sa.String(length=120), nullable=False),
        sa.Column("element", sa.String(length=3), nullable=False),
        sa.Column("matrix", sa.String(length=120), nullable=True),
        sa.Column("notes", sa.Text(), nullable=True),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_reference_material")),
        sa.UniqueConstraint("name", name=op.f("uq_reference_material_name")),
    )
    op.create_table(
        "column_batch",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("name", sa.String(length=120), nullable=False),
        sa.Column("performed_on", sa.Date(), nullable=False),
        sa.Column("operator", sa.String(length=32), nullable=False),
        sa.Column("element", sa.String(length=3), nullable=False),
        sa.Column("resin", sa.String(length=120), nullable=False),
        sa.Column("elution_scheme", sa.Text(), nullable=False),
        sa.Column("cut_names", sa.JSON(), nullable=False),
        sa.Column("yield_threshold", sa.Double(), nullable=False),
        sa.Column("blank_limit", sa.Double(), nullable=False),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.ForeignKeyConstraint(
            ["operator"], ["operator.code"], name=op.f("fk_column_batch_operator_operator")
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_column_batch")),
    )
    op.create_table(
        "custody_event",
        sa.Column("seq", sa.Integer(), autoincrement=False, nullable=False),
        sa.Column("at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("operator", sa.String(length=32), nullable=False),
        sa.Column("action", sa.String(length=60), nullable=False),
        sa.Column("object_ref", sa.String(length=40), nullable=False),
        sa.Column("parent_ref", sa.String(length=40), nullable=False),
        sa.Column("payload", sa.Text(), nullable=False),
        sa.Column("prev_hash", sa.String(length=64), nullable=False),
        sa.Column("hash", sa.String(length=64), nullable=False),
        sa.ForeignKeyConstraint(
            ["operator"], ["operator.code"], name=op.f("fk_custody_event_operator_operator")
        ),
        sa.PrimaryKeyConstraint("seq", name=op.f("pk_custody_event")),
        sa.UniqueConstraint("hash", name=op.f("uq_custody_event_hash")),
    )
    with op.batch_alter_table("custody_event", schema=None) as batch_op:
        batch_op.create_index("ix_custody_event_object_ref", ["object_ref"], unique=False)
        batch_op.create_index("ix_custody_event_parent_ref", ["parent_ref"], unique=False)

    op.create_table(
        "instrument_session",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("name", sa.String(length=120), nullable=False),
        sa.Column("instrument", sa.String(length=120), nullable=False),
        sa.Column("element", sa.String(length=3), nullable=False),
        sa.Column("started_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("operator", sa.String(length=32), nullable=False),
        sa.Column("bracketing_standard", sa.String(length=120), nullable=False),
        sa.Column("source_filename", sa.String(length=255), nullable=True),
        sa.Column("source_sha256", sa.String(length=64), nullable=True),
        sa.Column("profile_name", sa.String(length=120), nullable=True),
        sa.Column("flags", sa.JSON(), nullable=False),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.ForeignKeyConstraint(
            ["operator"], ["operator.code"], name=op.f("fk_instrument_session_operator_operator")
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_instrument_session")),
    )
    op.create_table(
        "loan",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("lender_id", sa.Integer(), nullable=False),
        sa.Column("reference", sa.String(length=80), nullable=False),
        sa.Column("title", sa.String(length=300), nullable=False),
        sa.Column("borrower", sa.String(length=200), nullable=False),
        sa.Column("received_on", sa.Date(), nullable=True),
        sa.Column(
            "status",
            sa.Enum("open", "returned", "closed", name="loanstatus", native_enum=False, length=16),
            nullable=False,
        ),
        sa.Column("returned_on", sa.Date(), nullable=True),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.ForeignKeyConstraint(
            ["lender_id"], ["lender.id"], name=op.f("fk_loan_lender_id_lender")
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_loan")),
        sa.UniqueConstraint("lender_id", "reference", name=op.f("uq_loan_lender_id_reference")),
    )
    with op.batch_alter_table("loan", schema=None) as batch_op:
        batch_op.create_index(batch_op.f("ix_loan_lender_id"), ["lender_id"], unique=False)

    op.create_table(
        "loan_document",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("loan_id", sa.Integer(), nullable=False),
        sa.Column("document_id", sa.Integer(), nullable=False),
        sa.Column("role", sa.String(length=40), nullable=False),
        sa.ForeignKeyConstraint(
            ["document_id"], ["document.id"], name=op.f("fk_loan_document_document_id_document")
        ),
        sa.ForeignKeyConstraint(
            ["loan_id"], ["loan.id"], name=op.f("fk_loan_document_loan_id_loan")
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_loan_document")),
        sa.UniqueConstraint(
            "loan_id", "document_id", name=op.f("uq_loan_document_loan_id_document_id")
        ),
    )
    with op.batch_alter_table("loan_document", schema=None) as batch_op:
        batch_op.create_index(batch_op.f("ix_loan_document_loan_id"), ["loan_id"], unique=False)

    op.create_table(
        "loan_terms",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("loan_id", sa.Integer(), nullable=False),
        sa.Column("version", sa.Integer(), nullable=False),
        sa.Column(
            "kind",
            sa.Enum(
                "original",
                "extension",
                "allowance",
                "specimens",
                "other",
                name="termskind",
                native_enum=False,
                length=16,
            ),
            nullable=False,
        ),
        sa.Column("effective_from", sa.Date(), nullable=False),
        sa.Column("permitted_tissues", sa.JSON(), nullable=False),
        sa.Column("max_mass_per_specimen_mg", sa.Double(), nullable=True),
        sa.Column("max_total_mass_mg", sa.Double(), nullable=True),
        sa.Column("max_specimens_sampled", sa.Integer(), nullable=True),
        sa.Column("due_on", sa.Date(), nullable=False),
        sa.Column("return_specimens", sa.Boolean(), nullable=False),
        sa.Column(
            "powder_disposition",
            sa.Enum(
                "return", "destroy", "retain", name="disposition", native_enum=False, length=16
            ),
            nullable=False,
        ),
        sa.Column(
            "solution_disposition",
            sa.Enum(
                "return", "destroy", "retain", name="disposition", native_enum=False, length=16
            ),
            nullable=False,
        ),
        sa.Column("report_data", sa.Boolean(), nullable=False),
        sa.Column("acknowledgement", sa.Boolean(), nullable=False),
        sa.Column("notes", sa.Text(), nullable=True),
        sa.Column("document_id", sa.Integer(), nullable=True),
        sa.Column("recorded_by", sa.String(length=32), nullable=False),
        sa.Column("recorded_at", sa.DateTime(timezone=True), nullable=False),
        sa.ForeignKeyConstraint(
            ["document_id"], ["document.id"], name=op.f("fk_loan_terms_document_id_document")
        ),
        sa.ForeignKeyConstraint(["loan_id"], ["loan.id"], name=op.f("fk_loan_terms_loan_id_loan")),
        sa.ForeignKeyConstraint(
            ["recorded_by"], ["operator.code"], name=op.f("fk_loan_terms_recorded_by_operator")
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_loan_terms")),
        sa.UniqueConstraint("loan_id", "version", name=op.f("uq_loan_terms_loan_id_version")),
    )
    with op.batch_alter_table("loan_terms", schema=None) as batch_op:
        batch_op.create_index(batch_op.f("ix_loan_terms_loan_id"), ["loan_id"], unique=False)

    op.create_table(
        "shipment",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("loan_id", sa.Integer(), nullable=False),
        sa.Column(
            "direction",
            sa.Enum("incoming", "outgoing", name="shipmentdirection", native_enum=False, length=16),
            nullable=False,
        ),
        sa.Column("shipped_on", sa.Date(), nullable=False),
        sa.Column("carrier", sa.String(length=120), nullable=True),
        sa.Column("tracking", sa.String(length=120), nullable=True),
        sa.Column("notes", sa.Text(), nullable=True),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.ForeignKeyConstraint(["loan_id"], ["loan.id"], name=op.f("fk_shipment_loan_id_loan")),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_shipment")),
    )
    with op.batch_alter_table("shipment", schema=None) as batch_op:
        batch_op.create_index(batch_op.f("ix_shipment_loan_id"), ["loan_id"], unique=False)

    op.create_table(
        "specimen",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("loan_id", sa.Integer(), nullable=False),
        sa.Column("catalog_number", sa.String(length=80), nullable=False),
        sa.Column("institution_code", sa.String(length=40), nullable=True),
        sa.Column("collection_code", sa.String(length=40), nullable=True),
        sa.Column("scientific_name", sa.String(length=200), nullable=True),
        sa.Column("skeletal_element", sa.String(length=120), nullable=True),
        sa.Column("locality", sa.String(length=300), nullable=True),
        sa.Column("formation", sa.String(length=120), nullable=True),
        sa.Column("earliest_epoch", sa.String(length=60), nullable=True),
        sa.Column("latest_epoch", sa.String(length=60), nullable=True),
        sa.Column("age_max_ma", sa.Double(), nullable=True),
        sa.Column("age_min_ma", sa.Double(), nullable=True),
        sa.Column("extra", sa.JSON(), nullable=False),
        sa.Column(
            "status",
            sa.Enum(
                "expected",
                "on_hand",
                "returned",
                name="specimenstatus",
                native_enum=False,
                length=16,
            ),
            nullable=False,
        ),
        sa.Column("condition_in", sa.Text(), nullable=True),
        sa.Column("condition_out", sa.Text(), nullable=True),
        sa.Column("received_at", sa.DateTime(timezone=True), nullable=True),
        sa.Column("returned_at", sa.DateTime(timezone=True), nullable=True),
        sa.Column("location_id", sa.Integer(), nullable=True),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.ForeignKeyConstraint(["loan_id"], ["loan.id"], name=op.f("fk_specimen_loan_id_loan")),
        sa.ForeignKeyConstraint(
            ["location_id"], ["location.id"], name=op.f("fk_specimen_location_id_location")
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_specimen")),
        sa.UniqueConstraint(
            "loan_id", "catalog_number", name=op.f("uq_specimen_loan_id_catalog_number")
        ),
    )
    with op.batch_alter_table("specimen", schema=None) as batch_op:
        batch_op.create_index(batch_op.f("ix_specimen_loan_id"), ["loan_id"], unique=False)
        batch_op.create_index(batch_op.f("ix_specimen_location_id"), ["location_id"], unique=False)

    op.create_table(
        "powder",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("specimen_id", sa.Integer(), nullable=False),
        sa.Column("tissue", sa.String(length=60), nullable=False),
        sa.Column("site", sa.String(length=200), nullable=True),
        sa.Column("tare_mg", sa.Double(), nullable=False),
        sa.Column("gross_mg", sa.Double(), nullable=False),
        sa.Column("readability_mg", sa.Double(), nullable=False),
        sa.Column("mass_mg", sa.Double(), nullable=False),
        sa.Column("mass_u_mg", sa.Double(), nullable=False),
        sa.Column("drilled_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("drilled_by", sa.String(length=32), nullable=False),
        sa.Column("override_reason", sa.Text(), nullable=True),
        sa.Column(
            "status",
            sa.Enum(
                "available",
                "consumed",
                "returned",
                "retained",
                "destroyed",
                name="containerstatus",
                native_enum=False,
                length=16,
            ),
            nullable=False,
        ),
        sa.Column("location_id", sa.Integer(), nullable=True),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.ForeignKeyConstraint(
            ["drilled_by"], ["operator.code"], name=op.f("fk_powder_drilled_by_operator")
        ),
        sa.ForeignKeyConstraint(
            ["location_id"], ["location.id"], name=op.f("fk_powder_location_id_location")
        ),
        sa.ForeignKeyConstraint(
            ["specimen_id"], ["specimen.id"], name=op.f("fk_powder_specimen_id_specimen")
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_powder")),
    )
    with op.batch_alter_table("powder", schema=None) as batch_op:
        batch_op.create_index(batch_op.f("ix_powder_location_id"), ["location_id"], unique=False)
        batch_op.create_index(batch_op.f("ix_powder_specimen_id"), ["specimen_id"], unique=False)

    op.create_table(
        "solution",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("powder_id", sa.Integer(), nullable=False),
        sa.Column("powder_mass_mg", sa.Double(), nullable=False),
        sa.Column("powder_mass_u_mg", sa.Double(), nullable=False),
        sa.Column("acid", sa.String(length=120), nullable=False),
        sa.Column("solution_mass_g", sa.Double(), nullable=False),
        sa.Column("solution_mass_u_g", sa.Double(), nullable=False),
        sa.Column("dissolved_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("dissolved_by", sa.String(length=32), nullable=False),
        sa.Column(
            "status",
            sa.Enum(
                "available",
                "consumed",
                "returned",
                "retained",
                "destroyed",
                name="containerstatus",
                native_enum=False,
                length=16,
            ),
            nullable=False,
        ),
        sa.Column("location_id", sa.Integer(), nullable=True),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.ForeignKeyConstraint(
            ["dissolved_by"], ["operator.code"], name=op.f("fk_solution_dissolved_by_operator")
        ),
        sa.ForeignKeyConstraint(
            ["location_id"], ["location.id"], name=op.f("fk_solution_location_id_location")
        ),
        sa.ForeignKeyConstraint(
            ["powder_id"], ["powder.id"], name=op.f("fk_solution_powder_id_powder")
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_solution")),
    )
    with op.batch_alter_table("solution", schema=None) as batch_op:
        batch_op.create_index(batch_op.f("ix_solution_location_id"), ["location_id"], unique=False)
        batch_op.create_index(batch_op.f("ix_solution_powder_id"), ["powder_id"], unique=False)

    op.create_table(
        "aliquot",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("solution_id", sa.Integer(), nullable=False),
        sa.Column("mass_g", sa.Double(), nullable=False),
        sa.Column("mass_u_g", sa.Double(), nullable=False),
        sa.Column(
            "purpose",
            sa.Enum(
                "isotopes",
                "concentration",
                "archive",
                "other",
                name="aliquotpurpose",
                native_enum=False,
                length=16,
            ),
            nullable=False,
        ),
        sa.Column("taken_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("taken_by", sa.String(length=32), nullable=False),
        sa.Column(
            "status",
            sa.Enum(
                "available",
                "consumed",
                "returned",
                "retained",
                "destroyed",
                name="containerstatus",
                native_enum=False,
                length=16,
            ),
            nullable=False,
        ),
        sa.Column("location_id", sa.Integer(), nullable=True),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.ForeignKeyConstraint(
            ["location_id"], ["location.id"], name=op.f("fk_aliquot_location_id_location")
        ),
        sa.ForeignKeyConstraint(
            ["solution_id"], ["solution.id"], name=op.f("fk_aliquot_solution_id_solution")
        ),
        sa.ForeignKeyConstraint(
            ["taken_by"], ["operator.code"], name=op.f("fk_aliquot_taken_by_operator")
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_aliquot")),
    )
    with op.batch_alter_table("aliquot", schema=None) as batch_op:
        batch_op.create_index(batch_op.f("ix_aliquot_location_id"), ["location_id"], unique=False)
        batch_op.create_index(batch_op.f("ix_aliquot_solution_id"), ["solution_id"], unique=False)

    op.create_table(
        "concentration",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("solution_id", sa.Integer(), nullable=False),
        sa.Column("element", sa.String(length=3), nullable=False),
        sa.Column("value_ug_per_g", sa.Double(), nullable=False),
        sa.Column("u_ug_per_g", sa.Double(), nullable=False),
        sa.Column("method", sa.String(length=120), nullable=True),
        sa.Column("measured_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("recorded_by", sa.String(length=32), nullable=False),
        sa.Column("supersedes_id", sa.Integer(), nullable=True),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.ForeignKeyConstraint(
            ["recorded_by"], ["operator.code"], name=op.f("fk_concentration_recorded_by_operator")
        ),
        sa.ForeignKeyConstraint(
            ["solution_id"], ["solution.id"], name=op.f("fk_concentration_solution_id_solution")
        ),
        sa.ForeignKeyConstraint(
            ["supersedes_id"],
            ["concentration.id"],
            name=op.f("fk_concentration_supersedes_id_concentration"),
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_concentration")),
    )
    with op.batch_alter_table("concentration", schema=None) as batch_op:
        batch_op.create_index(
            batch_op.f("ix_concentration_solution_id"), ["solution_id"], unique=False
        )

    op.create_table(
        "batch_position",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("batch_id", sa.Integer(), nullable=False),
        sa.Column("slot", sa.Integer(), nullable=False),
        sa.Column(
            "kind",
            sa.Enum(
                "sample", "blank", "reference", name="positionkind", native_enum=False, length=16
            ),
            nullable=False,
        ),
        sa.Column("aliquot_id", sa.Integer(), nullable=True),
        sa.Column("reference_material_id", sa.Integer(), nullable=True),
        sa.Column("loaded_ug", sa.Double(), nullable=True),
        sa.Column("loaded_u_ug", sa.Double(), nullable=True),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.ForeignKeyConstraint(
            ["aliquot_id"], ["aliquot.id"], name=op.f("fk_batch_position_aliquot_id_aliquot")
        ),
        sa.ForeignKeyConstraint(
            ["batch_id"], ["column_batch.id"], name=op.f("fk_batch_position_batch_id_column_batch")
        ),
        sa.ForeignKeyConstraint(
            ["reference_material_id"],
            ["reference_material.id"],
            name=op.f("fk_batch_position_reference_material_id_reference_material"),
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_batch_position")),
        sa.UniqueConstraint("batch_id", "slot", name=op.f("uq_batch_position_batch_id_slot")),
    )
    with op.batch_alter_table("batch_position", schema=None) as batch_op:
        batch_op.create_index(
            batch_op.f("ix_batch_position_aliquot_id"), ["aliquot_id"], unique=False
        )
        batch_op.create_index(batch_op.f("ix_batch_position_batch_id"), ["batch_id"], unique=False)

    op.create_table(
        "cut",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("position_id", sa.Integer(), nullable=False),
        sa.Column("name", sa.String(length=60), nullable=False),
        sa.Column("recovered_ug", sa.Double(), nullable=True),
        sa.Column("recovered_u_ug", sa.Double(), nullable=True),
        sa.Column(
            "status",
            sa.Enum(
                "available",
                "consumed",
                "returned",
                "retained",
                "destroyed",
                name="containerstatus",
                native_enum=False,
                length=16,
            ),
            nullable=False,
        ),
        sa.Column("location_id", sa.Integer(), nullable=True),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.ForeignKeyConstraint(
            ["location_id"], ["location.id"], name=op.f("fk_cut_location_id_location")
        ),
        sa.ForeignKeyConstraint(
            ["position_id"], ["batch_position.id"], name=op.f("fk_cut_position_id_batch_position")
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_cut")),
        sa.UniqueConstraint("position_id", "name", name=op.f("uq_cut_position_id_name")),
    )
    with op.batch_alter_table("cut", schema=None) as batch_op:
        batch_op.create_index(batch_op.f("ix_cut_location_id"), ["location_id"], unique=False)
        batch_op.create_index(batch_op.f("ix_cut_position_id"), ["position_id"], unique=False)

    op.create_table(
        "measurement",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("session_id", sa.Integer(), nullable=False),
        sa.Column("run_order", sa.Integer(), nullable=False),
        sa.Column("sample_name", sa.String(length=200), nullable=False),
        sa.Column(
            "role",
            sa.Enum(
                "standard",
                "sample",
                "reference",
                "blank",
                "unmatched",
                name="measurementrole",
                native_enum=False,
                length=16,
            ),
            nullable=False,
        ),
        sa.Column("cut_id", sa.Integer(), nullable=True),
        sa.Column("reference_material_id", sa.Integer(), nullable=True),
        sa.Column("ratios", sa.JSON(), nullable=False),
        sa.Column("errors", sa.JSON(), nullable=False),
        sa.Column("excluded_reason", sa.String(length=300), nullable=True),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.ForeignKeyConstraint(["cut_id"], ["cut.id"], name=op.f("fk_measurement_cut_id_cut")),
        sa.ForeignKeyConstraint(
            ["reference_material_id"],
            ["reference_material.id"],
            name=op.f("fk_measurement_reference_material_id_reference_material"),
        ),
        sa.ForeignKeyConstraint(
            ["session_id"],
            ["instrument_session.id"],
            name=op.f("fk_measurement_session_id_instrument_session"),
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_measurement")),
        sa.UniqueConstraint(
            "session_id", "run_order", name=op.f("uq_measurement_session_id_run_order")
        ),
    )
    with op.batch_alter_table("measurement", schema=None) as batch_op:
        batch_op.create_index(batch_op.f("ix_measurement_cut_id"), ["cut_id"], unique=False)
        batch_op.create_index(batch_op.f("ix_measurement_session_id"), ["session_id"], unique=False)

    op.create_table(
        "result",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("session_id", sa.Integer(), nullable=False),
        sa.Column("cut_id", sa.Integer(), nullable=True),
        sa.Column("reference_material_id", sa.Integer(), nullable=True),
        sa.Column("ratio", sa.String(length=20), nullable=False),
        sa.Column("scale", sa.String(length=120), nullable=False),
        sa.Column("delta_permil", sa.Double(), nullable=False),
        sa.Column("sd_permil", sa.Double(), nullable=True),
        sa.Column("two_se_permil", sa.Double(), nullable=True),
        sa.Column("n", sa.Integer(), nullable=False),
        sa.Column("flags", sa.JSON(), nullable=False),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.ForeignKeyConstraint(["cut_id"], ["cut.id"], name=op.f("fk_result_cut_id_cut")),
        sa.ForeignKeyConstraint(
            ["reference_material_id"],
            ["reference_material.id"],
            name=op.f("fk_result_reference_material_id_reference_material"),
        ),
        sa.ForeignKeyConstraint(
            ["session_id"],
            ["instrument_session.id"],
            name=op.f("fk_result_session_id_instrument_session"),
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_result")),
    )
    with op.batch_alter_table("result", schema=None) as batch_op:
        batch_op.create_index(batch_op.f("ix_result_cut_id"), ["cut_id"], unique=False)
        batch_op.create_index(batch_op.f("ix_result_session_id"), ["session_id"], unique=False)


def downgrade() -> None:
    with op.batch_alter_table("result", schema=None) as batch_op:
        batch_op.drop_index(batch_op.f("ix_result_session_id"))
        batch_op.drop_index(batch_op.f("ix_result_cut_id"))

    op.drop_table("result")
    with op.batch_alter_table("measurement", schema=None) as batch_op:
        batch_op.drop_index(batch_op.f("ix_measurement_session_id"))
        batch_op.drop_index(batch_op.f("ix_measurement_cut_id"))

    op.drop_table("measurement")
    with op.batch_alter_table("cut", schema=None) as batch_op:
        batch_op.drop_index(batch_op.f("ix_cut_position_id"))
        batch_op.drop_index(batch_op.f("ix_cut_location_id"))

    op.drop_table("cut")
    with op.batch_alter_table("batch_position", schema=None) as batch_op:
        batch_op.drop_index(batch_op.f("ix_batch_position_batch_id"))
        batch_op.drop_index(batch_op.f("ix_batch_position_aliquot_id"))

    op.drop_table("batch_position")
    with op.batch_alter_table("concentration", schema=None) as batch_op:
        batch_op.drop_index(batch_op.f("ix_concentration_solution_id"))

    op.drop_table("concentration")
    with op.batch_alter_table("aliquot", schema=None) as batch_op:
        batch_op.drop_index(batch_op.f("ix_aliquot_solution_id"))
        batch_op.drop_index(batch_op.f("ix_aliquot_location_id"))

    op.drop_table("aliquot")
    with op.batch_alter_table("solution", schema=None) as batch_op:
        batch_op.drop_index(batch_op.f("ix_solution_powder_id"))
        batch_op.drop_index(batch_op.f("ix_solution_location_id"))

    op.drop_table("solution")
    with op.batch_alter_table("powder", schema=None) as batch_op:
        batch_op.drop_index(batch_op.f("ix_powder_specimen_id"))
        batch_op.drop_index(batch_op.f("ix_powder_location_id"))

    op.drop_table("powder")
    with op.batch_alter_table("specimen", schema=None) as batch_op:
        batch_op.drop_index(batch_op.f("ix_specimen_location_id"))
        batch_op.drop_index(batch_op.f("ix_specimen_loan_id"))

    op.drop_table("specimen")
    with op.batch_alter_table("shipment", schema=None) as batch_op:
        batch_op.drop_index(batch_op.f("ix_shipment_loan_id"))

    op.drop_table("shipment")
    with op.batch_alter_table("loan_terms", schema=None) as batch_op:
        batch_op.drop_index(batch_op.f("ix_loan_terms_loan_id"))

    op.drop_table("loan_terms")
    with op.batch_alter_table("loan_document", schema=None) as batch_op:
        batch_op.drop_index(batch_op.f("ix_loan_document_loan_id"))

    op.drop_table("loan_document")
    with op.batch_alter_table("loan", schema=None) as batch_op:
        batch_op.drop_index(batch_op.f("ix_loan_lender_id"))

    op.drop_table("loan")
    op.drop_table("instrument_session")
    with op.batch_alter_table("custody_event", schema=None) as batch_op:
        batch_op.drop_index("ix_custody_event_parent_ref")
        batch_op.drop_index("ix_custody_event_object_ref")

    op.drop_table("custody_event")
    op.drop_table("column_batch")
    op.drop_table("reference_material")
    op.drop_table("operator")
    with op.batch_alter_table("location", schema=None) as batch_op:
        batch_op.drop_index(batch_op.f("ix_location_parent_id"))

    op.drop_table("location")
    op.drop_table("lender")
    op.drop_table("document")
