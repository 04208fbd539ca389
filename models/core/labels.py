"""Plain words for the dose codes: the one table per code, for the command line, the pages and the e-mails.

Words start in lower case so they read inside a sentence; a page heading or a table cell that starts
with one capitalises it with the `capfirst` filter.
"""
from models.core.codes import LensSource, Level, LevelKind, Location, MrdPolicy, PeriodKind, Proration, Result, Series

LOCATION_LABELS = {
    Location.WHOLE_BODY: "whole body",
    Location.LEFT_HAND: "left hand",
    Location.RIGHT_HAND: "right hand",
    Location.EYE: "eye",
    Location.ABDOMEN: "abdomen",
}
SERIES_LABELS = {
    Series.EFFECTIVE: "whole body, Hp(10)",
    Series.SKIN: "skin, Hp(0.07)",
    Series.LENS: "lens of the eye",
    Series.LEFT_HAND: "left hand, Hp(0.07)",
    Series.RIGHT_HAND: "right hand, Hp(0.07)",
    Series.WORST_HAND: "worse hand, Hp(0.07)",
    Series.FETUS: "embryo/fetus, Hp(10)",
}
PERIOD_LABELS = {
    PeriodKind.YEAR: "calendar year",
    PeriodKind.ROLLING_12_MONTHS: "last 12 months",
    PeriodKind.QUARTER: "calendar quarter",
    PeriodKind.MONTH: "calendar month",
    PeriodKind.FIVE_YEAR_BLOCK: "five-year block",
    PeriodKind.ROLLING_FIVE_YEARS: "last five years",
    PeriodKind.PREGNANCY: "since the pregnancy declaration",
}
LEVEL_LABELS = {
    Level.BELOW_1: "below level I",
    Level.LEVEL_1: "level I",
    Level.LEVEL_2: "level II",
    Level.LIMIT_REACHED: "limit reached",
    # A row no rule covers (evaluation.NO_LIMIT): nothing was assessed, so never "below level I".
    "no_limit": "no limit in this set",
    # A row with no result of a dosimeter it reads in the period (evaluation.NO_RESULT): no dose to grade.
    "no_result": "no dosimeter result",
}
RESULT_LABELS = {
    Result.MEASURED: "measured",
    Result.BELOW_MRD: "below the minimum reportable dose (MRD)",
    Result.UNUSED: "unused (not worn)",
    Result.LOST: "lost",
    Result.NOT_RETURNED: "not returned",
}
LEVEL_KIND_LABELS = {LevelKind.FRACTION: "fraction of the limit", LevelKind.ABSOLUTE: "mSv per period"}
PRORATION_LABELS = {
    Proration.PRORATE_DAYS: "Spread each record over its wear days; a period counts the days "
                            "inside it",
    Proration.WEAR_END: "Whole record in the period of its wear-period end date",
}
MRD_LABELS = {
    MrdPolicy.ZERO: "Below the minimum reportable dose counts as zero",
    MrdPolicy.HALF: "Below the minimum reportable dose counts as half the MRD",
    MrdPolicy.FULL: "Below the minimum reportable dose counts as the MRD",
}
LENS_LABELS = {
    LensSource.HP007: "Lens from Hp(0.07) whole body where no Hp(3) is measured",
    LensSource.HP10: "Lens from Hp(10) whole body where no Hp(3) is measured",
}


# Series whose records may come from another dosimeter, and the location that is their own.
_OWN_LOCATION = {Series.LENS: (Location.EYE, "lens"), Series.FETUS: (Location.ABDOMEN, "fetus")}


def measured_label(series: str, quantity: str, location: str) -> str:
    """'Hp(10) whole body'; a lens or fetus assessed from another dosimeter says so."""
    own = f"{quantity} {LOCATION_LABELS[Location(location)]}"
    if Series(series) in _OWN_LOCATION:
        home, name = _OWN_LOCATION[Series(series)]
        if Location(location) is not home:
            return f"{name} from {own}"
    return own


def dose_row_label(series: str, quantity: str, location: str, period: str) -> str:
    """'Hp(10) whole body, calendar quarter' or 'lens from Hp(0.07) whole body, calendar quarter'."""
    return f"{measured_label(series, quantity, location)}, {PERIOD_LABELS[PeriodKind(period)]}"


def shared_row_label(series: str, quantity: str, location: str, period: str) -> str:
    """dose_row_label for text others may see (attention list, survey tasks, investigation lists):
    a fetal row would disclose a pregnancy, so it reads only 'a confidential dose row'."""
    if Series(series) is Series.FETUS:
        return "a confidential dose row (see the person's page)"
    return dose_row_label(series, quantity, location, period)
