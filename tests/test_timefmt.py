"""Tests of kit.timefmt: the kit's UTC time stamps.

Expected strings are the ISO 8601 forms the product contracts name (DESIGN.md:
GeoJSON ``valid_time`` ``YYYY-MM-DDTHH:MM:SSZ``; table times to the minute with Z)
[derived from the standard's extended and basic formats].
"""

import numpy as np
import pandas as pd

from kit.timefmt import iso_compact, iso_minutes, iso_seconds, utc


def test_formats_of_one_time():
    t = np.datetime64("2026-01-01T06:00:00", "ns")
    assert iso_seconds(t) == "2026-01-01T06:00:00Z"
    assert iso_minutes(t) == "2026-01-01T06:00Z"
    assert iso_compact(t) == "20260101T0600Z"


def test_aware_times_are_converted_to_utc_and_minutes_truncate():
    t = pd.Timestamp("2026-01-01T07:30:59+01:00")
    assert utc(t) == pd.Timestamp("2026-01-01T06:30:59")
    assert iso_seconds(t) == "2026-01-01T06:30:59Z"
    assert iso_minutes(t) == "2026-01-01T06:30Z"  # truncated, not rounded
    assert iso_minutes("2026-01-01T06:30Z") == "2026-01-01T06:30Z"
