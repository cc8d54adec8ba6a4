"""Time stamps as the kit writes them: UTC, ISO 8601 with a Z (one place for every format)."""

from __future__ import annotations

import pandas as pd

__all__ = ["utc", "iso_seconds", "iso_minutes", "iso_compact", "day_hour"]


def utc(t) -> pd.Timestamp:
    """``t`` (datetime64, Timestamp, str) as a naive pandas Timestamp in UTC."""
    ts = pd.Timestamp(t)
    if ts.tzinfo is not None:
        ts = ts.tz_convert("UTC").tz_localize(None)
    return ts


def iso_seconds(t) -> str:
    """``2031-02-03T06:00:00Z``: the form of GeoJSON/CSV ``valid_time`` fields."""
    return utc(t).strftime("%Y-%m-%dT%H:%M:%SZ")


def iso_minutes(t) -> str:
    """``2031-02-03T06:00Z``: the form of tables and titles."""
    return utc(t).strftime("%Y-%m-%dT%H:%MZ")


def iso_compact(t) -> str:
    """``20310203T0600Z``: ISO 8601 basic form, to the minute, for file and folder names."""
    return utc(t).strftime("%Y%m%dT%H%MZ")


def day_hour(t, *, minutes=False) -> str:
    """``14/19Z`` (day and hour, nearest hour) or ``14/1940Z``: the form of products for people."""
    ts = utc(t)
    return ts.strftime("%d/%H%MZ") if minutes else ts.round("h").strftime("%d/%HZ")
