"""Column names of the tables that flow through vigil, defined once, with their units.

Times inside the tables are Julian dates whose scale is part of the name (`_bjd_tdb`,
`_jd_utc`); exports turn them into ISO 8601 strings. Durations carry `_d`, `_h` or `_min`.
"""

# targets table (catalog -> ephemeris)
TARGET_COLUMNS = {
    "name": "planet name",
    "ra_deg": "right ascension, ICRS, degrees",
    "dec_deg": "declination, ICRS, degrees",
    "t0_bjd_tdb": "reference mid-transit time, BJD in TDB",
    "t0_err_d": "1-sigma uncertainty of t0, days",
    "period_d": "orbital period, days",
    "period_err_d": "1-sigma uncertainty of the period, days",
    "duration_h": "total transit duration, first to fourth contact, hours",
    "t0_period_cov_d2": "covariance of t0 and period, days^2 (0 when absent)",
}

# transits table (ephemeris + timescales), one row per transit per site
TRANSIT_COLUMNS = {
    "target": "planet name",
    "site": "site name",
    "event": "transit, or occultation (secondary eclipse) following the transit of the same epoch",
    "epoch": "transit number counted from t0",
    "mid_bjd_tdb": "predicted mid-transit time, BJD_TDB",
    "mid_sigma_d": "1-sigma uncertainty of the mid-time, days",
    "duration_h": "event duration, first to fourth contact, hours",
    "period_d": "orbital period, days",
    "mid_jd_utc": "mid-transit time as seen at the site, JD in UTC",
    "ingress_jd_utc": "first contact at the site, JD in UTC",
    "egress_jd_utc": "fourth contact at the site, JD in UTC",
    "window_start_jd_utc": "ingress minus baseline minus K sigma, JD in UTC",
    "window_end_jd_utc": "egress plus baseline plus K sigma, JD in UTC",
    "stale": "K sigma exceeds a quarter of the duration or the baseline: refresh the ephemeris",
}

# windows table (visibility adds these)
WINDOW_COLUMNS = {
    "coverage": "full, ingress, egress, partial or none",
    "observable_fraction": "fraction of [ingress, egress] that is observable",
    "observable_start_jd_utc": "start of the longest observable stretch overlapping the transit, JD in UTC",
    "observable_end_jd_utc": "end of that stretch, JD in UTC",
    "alt_mid_deg": "apparent target altitude at mid-transit (refraction included), degrees",
    "airmass_mid": "airmass at mid-transit (Kasten & Young 1989)",
    "sun_alt_mid_deg": "altitude of the Sun's centre at mid-transit (geometric), degrees",
    "moon_sep_deg": "Moon-target separation at mid-transit, degrees",
    "moon_illumination": "illuminated fraction of the Moon's disk at mid-transit (0 new, 1 full)",
}

COVERAGE_CLASSES = ("full", "ingress", "egress", "partial", "none")
