"""Places where each area adds to shared pages and to every request, so shared code knows no area.

Every registration gives an order, unique within its slot: `validate_orders` (run when the app is
built) refuses two registrations with the same order and names both, so the place of a section
never depends on which module happened to be imported first.
"""
from __future__ import annotations

import enum
from collections.abc import Callable, Iterator
from dataclasses import dataclass, field
from typing import Any

from flask import Flask, request
from flask_login import current_user

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
    UNDELIVERED_MAIL = 55
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
    Severity.BYPASS: "state-bad", Severity.UNDELIVERED_MAIL: "state-bad",
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


class SlotOrderClash(RuntimeError):
    """Two registrations in one slot share an order."""


@dataclass(frozen=True)
class Registration:
    """One thing an area registered: its place, who sees it (everyone when `roles` is empty), what it is."""

    order: int
    roles: frozenset[Role]
    name: str
    value: Any

    def visible_to(self, viewer: Person) -> bool:
        """Whether this viewer's roles let them see it."""
        return not self.roles or viewer.has_role(*self.roles)


def _name_of(function: Callable) -> str:
    """Where a registered function lives, for messages."""
    return f"{function.__module__}.{function.__qualname__}"


@dataclass
class Registry:
    """What areas registered in one slot, kept in order."""

    name: str
    entries: list[Registration] = field(default_factory=list)

    def __post_init__(self):
        ALL_SLOTS.append(self)

    def register(self, value: Any, order: int, name: str, roles: set[Role] | None = None) -> None:
        """Add one registration."""
        self.entries.append(Registration(order, frozenset(roles or ()), name, value))

    def in_order(self) -> list[Registration]:
        """Every registration, by order."""
        return sorted(self.entries, key=lambda entry: entry.order)

    def for_viewer(self, viewer: Person) -> list[Registration]:
        """The registrations this viewer may see, by order."""
        return [entry for entry in self.in_order() if entry.visible_to(viewer)]

    def validate_orders(self) -> None:
        """Refuse two registrations with the same order, naming both."""
        seen: dict[int, Registration] = {}
        for entry in self.entries:
            if entry.order in seen:
                raise SlotOrderClash(
                    f"Slot '{self.name}': {seen[entry.order].name} and {entry.name} both use order "
                    f"{entry.order}; give each a distinct order.")
            seen[entry.order] = entry


ALL_SLOTS: list[Registry] = []


@dataclass(frozen=True)
class Section:
    """A block of a page: a template and the loader that gives it its `data`."""

    template: str
    load: Callable[..., dict]


class Slot(Registry):
    """A place on a page where areas add sections (templates with loaded data)."""

    def add(self, template: str, roles: set[Role] | None = None, *, order: int):
        """Decorator: register a section loader; it receives the page's subject."""

        def decorate(load: Callable[..., dict]):
            self.register(Section(template, load), order, f"{_name_of(load)} ({template})", roles)
            return load

        return decorate

    def render_for(self, viewer: Person, *subject) -> list[tuple[Section, dict]]:
        """The sections this viewer may see, loaded for the subject, in order."""
        return [(entry.value, entry.value.load(*subject)) for entry in self.for_viewer(viewer)]


class AttentionSources(Registry):
    """Sources of lines for the safety officer's attention list."""

    def add(self, *, order: int):
        """Decorator: register a source; `order` breaks ties between lines of the same severity."""

        def decorate(source: Callable[[], list[Attention]]):
            self.register(source, order, _name_of(source))
            return source

        return decorate

    def collect(self) -> list[Attention]:
        """Every source's lines, most severe first."""
        return sorted((line for entry in self.in_order() for line in entry.value()),
                      key=lambda line: line.severity)


@dataclass(frozen=True)
class Badge:
    """A short state shown beside an instrument's name wherever its status shows."""

    text: str
    css: str


class InstrumentBadges(Registry):
    """States that areas add to an instrument's status (e.g. a bypass in force)."""

    def add(self, *, order: int):
        """Decorator: register a function from an instrument to its badges."""

        def decorate(badges: Callable[..., list[Badge]]):
            self.register(badges, order, _name_of(badges))
            return badges

        return decorate

    def for_instrument(self, instrument) -> Iterator[Badge]:
        """Every area's badges for one instrument, in order."""
        for entry in self.in_order():
            yield from entry.value(instrument)


class RequestHooks(Registry):
    """Work done before every request except for static files, in order."""

    def add(self, *, order: int):
        """Decorator: register a hook taking no arguments."""

        def decorate(hook: Callable[[], None]):
            self.register(hook, order, _name_of(hook))
            return hook

        return decorate

    def run(self) -> None:
        """Run every hook, unless the request is for a static file (which needs no database)."""
        endpoint = request.endpoint or ""
        if endpoint == "static" or endpoint.endswith(".static"):
            return
        for entry in self.in_order():
            entry.value()


@dataclass(frozen=True)
class NavLink:
    """A link in the top navigation."""

    label: str
    endpoint: str


@dataclass(frozen=True)
class NavGroup:
    """Several links behind one menu entry, so the navigation fits one row."""

    label: str
    links: list[NavLink]


# Records the safety officer consults now and then, kept behind one entry (by endpoint).
NAV_GROUPS = {"Records": ("surveys.surveys", "surveys.permits", "doses.index",
                          "exposure.investigations", "audit.index")}


class Navigation(Registry):
    """The top navigation, assembled from what each area registers."""

    def add(self, label: str, endpoint: str, roles: set[Role] | None = None, *, order: int):
        """Register a link."""
        self.register(NavLink(label, endpoint), order, f"link '{label}' ({endpoint})", roles)

    def for_person(self, person: Person) -> list[NavLink]:
        """The links a person sees, in order."""
        return [entry.value for entry in self.for_viewer(person)]

    def menu_for(self, person: Person) -> list[NavLink | NavGroup]:
        """The person's links, those of a group gathered behind it where it holds two or more;
        a group stands where its first link would."""
        placed = [(entry.order, entry.value) for entry in self.for_viewer(person)]
        entries: list[tuple[int, NavLink | NavGroup]] = []
        grouped: set[str] = set()
        for label, endpoints in NAV_GROUPS.items():
            members = [(order, link) for order, link in placed if link.endpoint in endpoints]
            if len(members) >= 2:
                entries.append((members[0][0], NavGroup(label, [link for _, link in members])))
                grouped.update(link.endpoint for _, link in members)
        entries += [(order, link) for order, link in placed if link.endpoint not in grouped]
        return [item for _, item in sorted(entries, key=lambda e: e[0])]


# Top navigation.
navigation = Navigation("navigation")
# Home page: sections load with the viewer.
home_panels = Slot("home_panels")
# Instrument page: sections load with the instrument.
instrument_sections = Slot("instrument_sections")
# Settings page: sections load with the lab settings row.
settings_sections = Slot("settings_sections")
# The safety officer's attention list on the home page.
attention = AttentionSources("attention")
# Banners atop every page for a logged-in person: sections load with the viewer.
banners = Slot("banners")
# Badges beside an instrument's status, wherever it shows.
instrument_badges = InstrumentBadges("instrument_badges")
# Work before every request (static files excepted).
request_hooks = RequestHooks("request_hooks")

navigation.add("Home", "home.index", order=0)
navigation.add("Instruments", "instruments.index", order=10)
navigation.add("People", "people.index", {Role.ADMIN}, order=80)
navigation.add("Settings", "settings.index", {Role.SAFETY_OFFICER, Role.ADMIN}, order=90)
navigation.add("Audit log", "audit.index", {Role.SAFETY_OFFICER, Role.ADMIN}, order=95)


def validate_orders() -> None:
    """Refuse the set-up when any slot has two registrations with one order."""
    for slot in ALL_SLOTS:
        slot.validate_orders()


def install(app: Flask) -> None:
    """Check the orders, run the request hooks before each request, give shared templates the slots."""
    validate_orders()
    app.before_request(request_hooks.run)

    @app.context_processor
    def _slots() -> dict:
        return {"navigation": navigation, "instrument_badges": instrument_badges,
                "banners": lambda: banners.render_for(current_user, current_user)
                if current_user.is_authenticated else []}
