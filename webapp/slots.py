"""Places on shared pages where each area adds its own sections, so pages know no area's details."""
from __future__ import annotations

import enum
from collections.abc import Callable
from dataclasses import dataclass, field

from models.people.tables import Person, Role


class Severity(enum.IntEnum):
    """Order of the safety officer's attention list: most severe first."""

    LIMIT_SET = 5  # the limit set itself: none, not confirmed, or without a limit for someone
    LIMIT_REACHED = 10
    LEVEL_2 = 20
    LEVEL_1 = 30
    PROJECTED = 40
    OPEN_INVESTIGATION = 45
    OUT_OF_SERVICE = 50
    FAILED_CHECK = 60
    OVERDUE = 70
    METER_CALIBRATION = 80
    BYPASS = 90
    DOSIMETER_NOT_RETURNED = 100
    TRAINING = 110
    INCIDENT = 120
    REVIEWED = 130  # a dose at a level whose investigation is signed off, until the next level or window


SEVERITY_CLASS = {
    Severity.LIMIT_SET: "state-bad",
    Severity.LIMIT_REACHED: "state-bad", Severity.LEVEL_2: "state-bad",
    Severity.LEVEL_1: "state-warn", Severity.PROJECTED: "state-warn",
    Severity.OUT_OF_SERVICE: "state-bad", Severity.FAILED_CHECK: "state-bad",
    Severity.BYPASS: "state-bad",
}


@dataclass(frozen=True)
class Attention:
    """One line of the attention list: what, how bad, where to act."""

    severity: Severity
    text: str
    url: str
    label: str = ""

    @property
    def css(self) -> str:
        """The style of the line's badge."""
        return SEVERITY_CLASS.get(self.severity, "")


@dataclass(frozen=True)
class Section:
    """A block of a page, shown to people holding one of `roles` (everyone when empty)."""

    template: str
    roles: frozenset[Role]
    load: Callable[..., dict]
    order: int


@dataclass
class Slot:
    """A place on a page where areas add sections without the page knowing them."""

    sections: list[Section] = field(default_factory=list)

    def add(self, template: str, roles: set[Role] | None = None, order: int = 50):
        """Decorator: register a section loader; it receives the page's subject."""

        def decorate(load: Callable[..., dict]):
            self.sections.append(Section(template, frozenset(roles or ()), load, order))
            return load

        return decorate

    def render_for(self, viewer: Person, *subject) -> list[tuple[Section, dict]]:
        """The sections this viewer may see, loaded for the subject, in order."""
        chosen = sorted(
            (s for s in self.sections if not s.roles or viewer.has_role(*s.roles)),
            key=lambda s: s.order,
        )
        return [(s, s.load(*subject)) for s in chosen]


@dataclass
class AttentionSources:
    """Sources of lines for the safety officer's attention list."""

    sources: list[Callable[[], list[Attention]]] = field(default_factory=list)

    def add(self, source: Callable[[], list[Attention]]):
        """Decorator: register a source."""
        self.sources.append(source)
        return source

    def collect(self) -> list[Attention]:
        """Every source's lines, most severe first."""
        return sorted((line for source in self.sources for line in source()),
                      key=lambda line: line.severity)


# Home page: sections load with the viewer.
home_panels = Slot()
# Instrument page: sections load with the instrument.
instrument_sections = Slot()
attention = AttentionSources()
# Settings page: sections load with the lab settings row.
settings_sections = Slot()


@dataclass(frozen=True)
class NavLink:
    """A link in the top navigation, for people holding one of `roles` (everyone when empty)."""

    label: str
    endpoint: str
    roles: frozenset[Role]
    order: int


@dataclass
class Navigation:
    """The top navigation, assembled from what each area registers."""

    links: list[NavLink] = field(default_factory=list)

    def add(self, label: str, endpoint: str, roles: set[Role] | None = None, order: int = 50):
        """Register a link."""
        self.links.append(NavLink(label, endpoint, frozenset(roles or ()), order))

    def for_person(self, person: Person) -> list[NavLink]:
        """The links a person sees, in order."""
        return sorted((l for l in self.links if not l.roles or person.has_role(*l.roles)),
                      key=lambda l: l.order)


navigation = Navigation()
navigation.add("Home", "home.index", order=0)
navigation.add("Instruments", "instruments.index", order=10)
navigation.add("People", "people.index", {Role.ADMIN}, order=80)
navigation.add("Settings", "settings.index", {Role.SAFETY_OFFICER, Role.ADMIN}, order=90)
navigation.add("Audit log", "audit.index", {Role.SAFETY_OFFICER, Role.ADMIN}, order=95)
