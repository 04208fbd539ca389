"""The logbook's domain: models and pure computation, free of any web framework.

Importing this package registers every table on `Base.metadata` and installs the audit listener.
"""
from models import database  # noqa: F401  (connection pragmas)
from models.audit import AuditEvent
from models.base import Base
from models.checks import CheckItemResult, SafetyCheck, TemporaryControl
from models.dosimetry import (
    Dosimeter,
    DoseRecord,
    ImportBatch,
    ImportMapping,
    Investigation,
    PregnancyDeclaration,
)
from models.incidents import Incident, IncidentNote
from models.instruments import ApiToken, Authorisation, ChecklistItem, ChecklistTemplate, Instrument
from models.limits import LimitRule, LimitSet
from models.people import Person, PersonRole
from models.permits import BypassPermit
from models.reminders import ReminderSent
from models.sessions import InstrumentSession
from models.settings import LabSettings
from models.surveys import Survey, SurveyMeter, SurveyPoint, SurveyTask

__all__ = [
    "ApiToken", "AuditEvent", "Authorisation", "Base", "BypassPermit", "CheckItemResult",
    "ChecklistItem", "ChecklistTemplate", "Dosimeter", "DoseRecord", "ImportBatch",
    "ImportMapping", "Incident", "IncidentNote", "Instrument", "InstrumentSession",
    "Investigation", "LabSettings", "LimitRule", "LimitSet", "Person", "PersonRole",
    "PregnancyDeclaration", "ReminderSent", "SafetyCheck", "Survey", "SurveyMeter", "SurveyPoint",
    "SurveyTask", "TemporaryControl",
]
