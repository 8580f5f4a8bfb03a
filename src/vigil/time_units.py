"""Units of time as plain factors: Julian dates count days, durations carry _d, _h, _min or _s."""

HOURS_PER_DAY = 24.0
MINUTES_PER_DAY = 1440.0
SECONDS_PER_DAY = 86400.0
DAYS_PER_JULIAN_YEAR = 365.25
