"""The logbook's domain: models and pure computation, free of any web framework.

Importing this package registers every table on `Base.metadata` and installs the audit listener
and the one that keeps the stored evaluation in step (models/exposure/figures_ops.py).
"""
from models.audit.tables import AuditEvent
from models.checks.tables import CheckItemResult, SafetyCheck, TemporaryControl
from models.core import database  # noqa: F401  (connection pragmas)
from models.core.base import Base
from models.core.outbox import OutboxMessage
from models.core.settings import LabSettings
from models.doses.tables import DoseRecord, Dosimeter, ImportBatch, ImportMapping, ImportStaging
from models.due.tables import ReminderSent
from models.exposure import figures_ops  # noqa: F401  (keeps the stored evaluation in step)
from models.exposure.tables import (
    ExposureFigures,
    Investigation,
    LimitRule,
    LimitSet,
    PregnancyDeclaration,
    RuleChange,
)
from models.incidents.tables import Incident, IncidentNote
from models.instruments.tables import ApiToken, Authorisation, ChecklistItem, ChecklistTemplate, Instrument
from models.people.tables import Person, PersonRole
from models.sessions.tables import InstrumentSession
from models.surveys.tables import BypassPermit, Survey, SurveyMeter, SurveyPoint, SurveyTask

__all__ = [
    "ApiToken", "AuditEvent", "Authorisation", "Base", "BypassPermit", "CheckItemResult", "ExposureFigures",
    "ChecklistItem", "ChecklistTemplate", "Dosimeter", "DoseRecord", "ImportBatch", "ImportStaging",
    "ImportMapping", "Incident", "IncidentNote", "Instrument", "InstrumentSession",
    "Investigation", "LabSettings", "LimitRule", "LimitSet", "OutboxMessage", "Person", "PersonRole",
    "PregnancyDeclaration", "ReminderSent", "RuleChange", "SafetyCheck", "Survey", "SurveyMeter", "SurveyPoint",
    "SurveyTask", "TemporaryControl",
]
