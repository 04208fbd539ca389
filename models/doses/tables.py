"""Dosimeters, dose records with their versions, pregnancy declarations and investigations."""
from __future__ import annotations

import enum
from datetime import date, datetime

import sqlalchemy as sa
from sqlalchemy.orm import Mapped, mapped_column, relationship

from models.core.base import Base, IdMixin, enum_column, utcnow
from models.core.codes import Location, Quantity, Result
from models.people.tables import Person


class DosimeterKind(enum.StrEnum):
    """Where a dosimeter is worn."""

    WHOLE_BODY = "whole_body"
    RING = "ring"
    EYE = "eye"
    ABDOMEN = "abdomen"


class Hand(enum.StrEnum):
    """The hand a ring dosimeter is worn on."""

    LEFT = "left"
    RIGHT = "right"


class ExchangeCycle(enum.StrEnum):
    """How often the dosimetry service exchanges a dosimeter."""

    MONTHLY = "monthly"
    QUARTERLY = "quarterly"


class DoseSource(enum.StrEnum):
    """Where a dose value came from."""

    DOSIMETRY_REPORT = "dosimetry_report"
    RSO_ESTIMATE = "rso_estimate"
    INCIDENT_ESTIMATE = "incident_estimate"


SOURCE_LABELS = {
    DoseSource.DOSIMETRY_REPORT: "dosimetry report",
    DoseSource.RSO_ESTIMATE: "estimate by the safety officer",
    DoseSource.INCIDENT_ESTIMATE: "estimate after an incident",
}


class Dosimeter(IdMixin, Base):
    """A personal dosimeter issued to one wearer."""

    __tablename__ = "dosimeter"

    serial: Mapped[str] = mapped_column(sa.String(120), unique=True)
    kind: Mapped[DosimeterKind] = mapped_column(enum_column(DosimeterKind))
    hand: Mapped[Hand | None] = mapped_column(enum_column(Hand))
    wearer_id: Mapped[int] = mapped_column(sa.ForeignKey("person.id"), index=True)
    issued_on: Mapped[date]
    returned_on: Mapped[date | None]
    exchange_cycle: Mapped[ExchangeCycle] = mapped_column(
        enum_column(ExchangeCycle), default=ExchangeCycle.MONTHLY
    )

    wearer: Mapped[Person] = relationship()

    __table_args__ = (
        sa.CheckConstraint("returned_on IS NULL OR returned_on >= issued_on", name="return_after_issue"),
        sa.CheckConstraint("kind <> 'ring' OR hand IS NOT NULL", name="ring_has_hand"),
    )


class ImportBatch(IdMixin, Base):
    """One committed import of a dosimetry report."""

    __tablename__ = "import_batch"

    filename: Mapped[str] = mapped_column(sa.String(255))
    sha256: Mapped[str] = mapped_column(sa.String(64), unique=True)
    mapping_name: Mapped[str | None] = mapped_column(sa.String(120))
    row_count: Mapped[int]
    imported_by_id: Mapped[int | None] = mapped_column(sa.ForeignKey("person.id"))
    imported_at: Mapped[datetime] = mapped_column(default=utcnow)


class ImportStaging(IdMixin, Base):
    """A checked row of an import in progress, waiting to be published with the rest of its file.

    Working state, not a record: written outside the ORM a chunk at a time, read only by the import
    that staged it and deleted when it publishes; a run abandoned half-way (a killed process, a refusal
    at publish) is removed by a later import. No foreign keys and no CHECKs: the publish checks that
    people and dosimeters are still there, and dose_record's own CHECKs see every value as it goes in.
    """

    __tablename__ = "import_staging"

    run: Mapped[str] = mapped_column(sa.String(32))
    staged_at: Mapped[datetime]
    line: Mapped[int]
    person_id: Mapped[int]
    dosimeter_id: Mapped[int | None]
    wear_start: Mapped[date]
    wear_end: Mapped[date]
    quantity: Mapped[Quantity] = mapped_column(enum_column(Quantity, checked=False))
    location: Mapped[Location] = mapped_column(enum_column(Location, checked=False))
    value_msv: Mapped[float | None]
    result: Mapped[Result] = mapped_column(enum_column(Result, checked=False))
    mrd_msv: Mapped[float | None]
    source: Mapped[DoseSource] = mapped_column(enum_column(DoseSource, checked=False))
    basis: Mapped[str | None] = mapped_column(sa.Text)
    entered_unit: Mapped[str] = mapped_column(sa.String(8))

    __table_args__ = (
        sa.Index("ix_import_staging_run_line", "run", "line"),
        {"info": {"audit_rows": False}},
    )


class ImportMapping(IdMixin, Base):
    """A saved mapping from a dosimetry service's CSV columns to the logbook's fields."""

    __tablename__ = "import_mapping"

    name: Mapped[str] = mapped_column(sa.String(120), unique=True)
    columns: Mapped[dict] = mapped_column(sa.JSON)
    date_format: Mapped[str] = mapped_column(sa.String(32), default="%Y-%m-%d")
    default_unit: Mapped[str] = mapped_column(sa.String(8), default="mSv")
    created_at: Mapped[datetime] = mapped_column(default=utcnow)


# Results reported lost or not returned; written as literals so the planner can match the index.
UNRETURNED = "result IN ('lost', 'not_returned')"


class DoseRecord(IdMixin, Base):
    """One dose result for one wear period; corrected only by a new version."""

    __tablename__ = "dose_record"

    person_id: Mapped[int] = mapped_column(sa.ForeignKey("person.id"), index=True)
    dosimeter_id: Mapped[int | None] = mapped_column(sa.ForeignKey("dosimeter.id"))
    wear_start: Mapped[date]
    wear_end: Mapped[date]
    quantity: Mapped[Quantity] = mapped_column(enum_column(Quantity))
    location: Mapped[Location] = mapped_column(enum_column(Location))
    value_msv: Mapped[float | None]
    result: Mapped[Result] = mapped_column(enum_column(Result))
    mrd_msv: Mapped[float | None]
    source: Mapped[DoseSource] = mapped_column(enum_column(DoseSource))
    basis: Mapped[str | None] = mapped_column(sa.Text)
    supersedes_id: Mapped[int | None] = mapped_column(
        sa.ForeignKey("dose_record.id"), unique=True
    )
    version: Mapped[int] = mapped_column(default=1)
    reason: Mapped[str | None] = mapped_column(sa.Text)
    import_batch_id: Mapped[int | None] = mapped_column(sa.ForeignKey("import_batch.id"))
    incident_id: Mapped[int | None] = mapped_column(sa.ForeignKey("incident.id"))
    entered_unit: Mapped[str] = mapped_column(sa.String(8), default="mSv")
    created_by_id: Mapped[int | None] = mapped_column(sa.ForeignKey("person.id"))
    created_at: Mapped[datetime] = mapped_column(default=utcnow)

    person: Mapped[Person] = relationship(foreign_keys=[person_id])
    dosimeter: Mapped[Dosimeter | None] = relationship()
    supersedes: Mapped[DoseRecord | None] = relationship(remote_side="DoseRecord.id")

    __table_args__ = (
        sa.CheckConstraint("wear_end >= wear_start", name="wear_end_after_start"),
        sa.CheckConstraint("value_msv IS NULL OR value_msv >= 0", name="value_not_negative"),
        sa.CheckConstraint("mrd_msv IS NULL OR mrd_msv >= 0", name="mrd_not_negative"),
        sa.CheckConstraint(
            "(supersedes_id IS NULL AND version = 1) OR (supersedes_id IS NOT NULL AND version > 1)",
            name="version_chain",
        ),
        sa.CheckConstraint(
            "supersedes_id IS NULL OR (reason IS NOT NULL AND length(trim(reason)) > 0)",
            name="correction_has_reason",
        ),
        sa.CheckConstraint(
            "source = 'dosimetry_report' OR (basis IS NOT NULL AND length(trim(basis)) > 0)",
            name="estimate_has_basis",
        ),
        # An import looks up a chunk's keys (people x wear starts) by seeks, not by each person's history.
        sa.Index("ix_dose_record_person_id_wear_start", "person_id", "wear_start"),
        # The few results still awaited, read on every safety officer's page: a partial index holds
        # only them, so it costs an import nothing.
        sa.Index("ix_dose_record_unreturned", "id", sqlite_where=sa.text(UNRETURNED),
                 postgresql_where=sa.text(UNRETURNED)),
    )
