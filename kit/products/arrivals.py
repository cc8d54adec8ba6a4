"""Site arrival table: when each front reaches each site, and the weather it brings.

One row per site and front passage, for every run and member of the analyses
given: the contract columns of DESIGN.md (:data:`CONTRACT_COLUMNS`), then
:data:`EXTRA_COLUMNS`, each explained in :data:`COLUMN_NOTES`. Times are UTC
ISO 8601 with ``Z``, speeds in knots, heights in m above mean sea level
(freezing levels) or ft above the site (cloud base); an empty cell where a
value does not apply. A front that misses the site gives a row with an empty
``passage_utc`` and a ``note`` such as "cold front passes 240 km N of site
(line ends there)"; a site with no passage in the window gets one row with an
empty ``front_kind`` and a note.

The science is in :mod:`kit.science.passages`: the site series sampled from
the grid, the signed distance of the site to a front, the surface front and
the frontal zone's centre, the passage time (interpolated or extrapolated at
the tracked speed) and the weather sequence around it, with the rules of thumb
beside it. This module assembles and formats the table from an Analysis.

A thin run (``ds.attrs["thin"]``: no humidity, wind or mean-sea-level
pressure on its levels) gives the same table with nothing invented: the
dew-point, wet-bulb, theta-w and cloud-base cells stay empty, the thermal
change is given in theta (``theta_change_k``, after ``thetaw_change_k``), a
geostrophic stand-in for the 10-m wind is named in ``note``, and every row of
such a run says what the run lacks and what was done instead (``thin_run``,
the last column). Tables of full runs have neither extra column.

Several runs or ensemble members give the earliest, median and latest passage
of the same front (matched by kind and nearest passage time) and
``spread_h`` = latest - earliest.

This module never imports graphics; see :mod:`kit.charts.timelines`.
"""

import numpy as np
import pandas as pd

from kit import CAUTION
from kit.constants import FT_PER_M
from kit.errors import InputError
from kit.io.sites import read_sites
from kit.model import Analysis
from kit.science.passages import (
    PRECIP_THRESHOLD_MMH,
    SurfaceFront,
    ZoneCentre,
    find_passages,
    format_utc,
    hours_since_epoch,
    missing_steps,
    round_or_nan,
    site_series,
    weather_sequence,
)
from kit.timefmt import day_hour as format_day_hour

__all__ = [
    "CONTRACT_COLUMNS",
    "EXTRA_COLUMNS",
    "THIN_COLUMNS",
    "COLUMN_NOTES",
    "THIN_COLUMN_NOTES",
    "add_spread",
    "arrival_table",
    "thin_notes",
    "PEOPLE_COLUMNS",
    "PEOPLE_KEY_COLUMNS",
    "EMPTY",
    "is_missing",
    "clean_text",
    "day_hour",
    "time_window",
    "precip_label",
    "fzra_label",
    "snow_label",
    "cloud_label",
    "wind_label",
    "freezing_label",
    "newest_run",
    "run_label",
    "people_table",
    "summary_table",
    "site_lines",
]

#: the arrival table columns every product carries (DESIGN.md)
CONTRACT_COLUMNS = [
    "site",
    "front_kind",
    "passage_utc",
    "speed_kt",
    "precip_start_utc",
    "precip_end_utc",
    "wind_before_deg",
    "wind_after_deg",
    "wind_turn_deg",
    "temp_change_c",
    "freezing_level_before_m",
    "freezing_level_after_m",
    "spread_h",
]

#: further columns, after the contract ones
EXTRA_COLUMNS = [
    "run",
    "member",
    "track",
    "level_hpa",
    "extrapolated",
    "surface_offset_km",
    "zone_centre_offset_km",
    "passage_from",
    "passage_earliest_utc",
    "passage_median_utc",
    "passage_latest_utc",
    "runs_with_passage",
    "precip_total_mm",
    "precip_peak_mm_h",
    "wind_before_kt",
    "wind_after_kt",
    "dewpoint_change_c",
    "thetaw_change_k",
    "wet_bulb_freezing_level_before_m",
    "wet_bulb_freezing_level_after_m",
    "cloud_base_before_ft_agl",
    "cloud_base_min_ft_agl",
    "cloud_base_min_utc",
    "cloud_base_low_ft_agl",
    "cloud_base_high_ft_agl",
    "fzra_start_utc",
    "fzra_end_utc",
    "fzra_warm_layer_max_c",
    "snow_risk",
    "precip_type",
    "rule_rain_what",
    "rule_rain_from_utc",
    "rule_rain_to_utc",
    "note",
]

#: columns a table gets only when one of its runs is thin (see the module notes)
THIN_COLUMNS = ["theta_change_k", "thin_run"]

#: what each column means, in a forecaster's words (units in brackets)
COLUMN_NOTES = {
    "site": "site name from the site list",
    "front_kind": "warm, cold or quasi-stationary; empty on a 'no passage' row",
    "passage_utc": "time the surface front (zone centre) crosses the site [UTC]",
    "speed_kt": "speed of the front across the site [kt]",
    "precip_start_utc": "start of the model's wet spell around the passage [UTC, to the step]",
    "precip_end_utc": "end of that wet spell [UTC, to the step]",
    "wind_before_deg": "10-m wind direction 3 h before the passage [degrees from]",
    "wind_after_deg": "10-m wind direction 3 h after the passage [degrees from]",
    "wind_turn_deg": "after minus before, positive clockwise (veer in the north) [degrees]",
    "temp_change_c": "2-m temperature after minus before [C]",
    "freezing_level_before_m": "0 C level 3 h before [m above mean sea level]",
    "freezing_level_after_m": "0 C level 3 h after [m above mean sea level]",
    "spread_h": "latest minus earliest passage over runs/members [h]",
    "run": "model run label",
    "member": "ensemble member (empty for a single run)",
    "track": "front track id within the run",
    "level_hpa": "level the front line was found on [hPa]",
    "extrapolated": "yes when the passage lies beyond the front's last step",
    "surface_offset_km": "line moved toward the warm side to the surface by its slope [km]",
    "zone_centre_offset_km": "line moved toward the cold side to the zone centre [km]",
    "passage_from": "how the surface front was placed: the centre of the 2 m theta-w (theta) "
    "zone measured on the profile a section through the site cuts (the one definition of "
    "the surface front in table, section and timeline), else estimated from the front's "
    "level",
    "passage_earliest_utc": "earliest passage of this front over runs/members [UTC]",
    "passage_median_utc": "median passage [UTC]",
    "passage_latest_utc": "latest passage [UTC]",
    "runs_with_passage": "how many runs/members show this passage",
    "precip_total_mm": "total of the wet spell [mm]",
    "precip_peak_mm_h": "highest rate in the wet spell [mm/h]",
    "wind_before_kt": "10-m wind speed before [kt]",
    "wind_after_kt": "10-m wind speed after [kt]",
    "dewpoint_change_c": "2-m dew point after minus before [C]",
    "thetaw_change_k": "theta-w at the front's level after minus before [K]",
    "wet_bulb_freezing_level_before_m": "wet-bulb 0 C level before [m above mean sea level]",
    "wet_bulb_freezing_level_after_m": "wet-bulb 0 C level after [m above mean sea level]",
    "cloud_base_before_ft_agl": "cloud base 3 h before, lower bound of its band (below) "
    "[ft above site]",
    "cloud_base_min_ft_agl": "lowest cloud base from 12 h before to 3 h after, lower bound of "
    "its band [ft above site]",
    "cloud_base_min_utc": "time of that lowest base [UTC]",
    "cloud_base_low_ft_agl": "the lowest cloud base lies between this and cloud_base_high_ft_agl "
    "[ft above site]: between the highest unsaturated and the lowest saturated point (RH >= "
    "95 %, common practice, no source) of the model column (2 m, then the pressure levels "
    "above the site, often 500-800 m apart); 0 when saturated at 2 m (fog or cloud on the "
    "ground possible); a model diagnosis, not an observation",
    "cloud_base_high_ft_agl": "upper bound of that band [ft above site]",
    "precip_type": "type of the precipitation spell step by step (rain, snow, freezing rain or "
    "ice pellets, e.g. 'snow then rain'): freezing rain or ice pellets under a warm layer "
    "aloft over sub-zero ground air, snow with the wet-bulb 0 C level under 300 m above the "
    "site (common practice, no source); 'precipitation' when the run has no humidity",
    "fzra_start_utc": "first step with air above 0 C aloft over sub-zero ground air [UTC]",
    "fzra_end_utc": "last such step (freezing rain / ice pellets possible) [UTC]",
    "fzra_warm_layer_max_c": "warmest temperature in that layer aloft [C]",
    "snow_risk": "yes when the wet-bulb 0 C level is < 300 m above the site while wet",
    "rule_rain_what": "which rule of thumb (common practice, no source)",
    "rule_rain_from_utc": "rule-of-thumb window start [UTC]",
    "rule_rain_to_utc": "rule-of-thumb window end [UTC]",
    "note": "plain-words remarks: misses, extrapolation, type changes",
}

#: what the columns of thin runs mean (:data:`THIN_COLUMNS`)
THIN_COLUMN_NOTES = {
    "theta_change_k": "theta at the front's level after minus before [K] (a run without "
    "humidity: the field its fronts were found in)",
    "thin_run": "what the run lacks and what was done instead (empty for a full run)",
}


def thin_notes(table):
    """Plain-words lines for a page or pack: one per thin run of the table.

    Parameters
    ----------
    table : pandas.DataFrame
        From :func:`arrival_table` (``attrs["thin"]``).

    Returns
    -------
    list of str
        ``"Thin run <run>: <what it lacks and what was done>"``; empty for full runs.
    """
    return [f"Thin run {run}: {text}" for run, text in table.attrs.get("thin", {}).items()]


# ----------------------------------------------------------------------- spread


def add_spread(table, *, max_match_h=24.0):
    """Earliest, median and latest passage over runs/members, and ``spread_h``.

    Rows of the same site are matched across sources (run, member) by front
    kind and nearest passage time (within ``max_match_h`` [h]); each matched
    group gets ``passage_earliest_utc``, ``passage_median_utc``,
    ``passage_latest_utc``, ``runs_with_passage`` ("2/3") and ``spread_h``
    [h] (latest - earliest; empty with a single source).

    Parameters
    ----------
    table : pandas.DataFrame
        Rows with ``site``, ``front_kind``, ``run``, ``member`` and a float
        column ``_passage_h`` [hours since 1970].
    max_match_h : float
        Largest time difference of the same front between two sources [h].

    Returns
    -------
    pandas.DataFrame
        The table with the spread columns filled in.
    """
    t = table.copy()
    for c in (
        "passage_earliest_utc",
        "passage_median_utc",
        "passage_latest_utc",
        "runs_with_passage",
    ):
        t[c] = ""
    t["spread_h"] = np.nan
    src = list(zip(t["run"].astype(str), t["member"].astype(str), strict=True))
    t["_src"] = [f"{a}|{b}" for a, b in src]
    n_src = len(dict.fromkeys(t["_src"]))
    t["_group"] = -1
    gid = 0
    for (_site, _kind), sub in t[np.isfinite(t["_passage_h"])].groupby(
        ["site", "front_kind"], sort=False
    ):
        groups = []  # list of dict(src -> (index, time))
        for s_, rows in sub.groupby("_src", sort=False):
            used = set()
            for idx, h in rows["_passage_h"].sort_values().items():
                best, bd = None, max_match_h
                for gi, g in enumerate(groups):
                    if s_ in g or gi in used:
                        continue
                    centre = np.median([v for _, v in g.values()])
                    if abs(centre - h) <= bd:
                        best, bd = gi, abs(centre - h)
                if best is None:
                    groups.append({s_: (idx, h)})
                    used.add(len(groups) - 1)
                else:
                    groups[best][s_] = (idx, h)
                    used.add(best)
        for g in groups:
            hs = np.array([v for _, v in g.values()])
            idxs = [i for i, _ in g.values()]
            t.loc[idxs, "passage_earliest_utc"] = format_utc(hs.min())
            t.loc[idxs, "passage_median_utc"] = format_utc(float(np.median(hs)))
            t.loc[idxs, "passage_latest_utc"] = format_utc(hs.max())
            t.loc[idxs, "runs_with_passage"] = f"{len(hs)}/{n_src}"
            t.loc[idxs, "_group"] = gid
            if len(hs) > 1:
                t.loc[idxs, "spread_h"] = round(float(hs.max() - hs.min()), 1)
            gid += 1
    return t.drop(columns=["_src"])


# ----------------------------------------------------------------------- table


#: columns shown as whole numbers (degrees, knots, metres, feet, kilometres)
_WHOLE_NUMBER_COLUMNS = [
    "speed_kt",
    "wind_before_deg",
    "wind_after_deg",
    "wind_turn_deg",
    "freezing_level_before_m",
    "freezing_level_after_m",
    "surface_offset_km",
    "zone_centre_offset_km",
    "wind_before_kt",
    "wind_after_kt",
    "wet_bulb_freezing_level_before_m",
    "wet_bulb_freezing_level_after_m",
    "cloud_base_before_ft_agl",
    "cloud_base_min_ft_agl",
]


def _columns(runs):
    """Return the table's columns: the contract, the extras, THIN_COLUMNS for thin runs."""
    columns = CONTRACT_COLUMNS + EXTRA_COLUMNS
    if any("td" not in ds for ds in runs):
        k = columns.index("thetaw_change_k") + 1
        columns = columns[:k] + ["theta_change_k"] + columns[k:]
    if any(ds.attrs.get("thin") for ds in runs):
        columns = columns + ["thin_run"]
    return columns


def _wind_note(series, row):
    """Note for a row whose wind cells hold a geostrophic stand-in ("" otherwise)."""
    where = series.attrs.get("wind_from", "")
    cells = [row.get(c, np.nan) for c in ("wind_before_deg", "wind_after_deg")]
    if not where or not np.isfinite(np.asarray(cells, dtype=float)).any():
        return ""
    return f"wind cells: {where}, not 10-m wind (the run has no wind)"


def _members(ds):
    if "member" in ds.dims:
        return [int(m) for m in ds["member"].values]
    return [None]


def _analyses(analyses):
    """One Analysis or a list of them, checked: the runs of an arrival table."""
    if isinstance(analyses, Analysis):
        analyses = [analyses]
    analyses = list(analyses) if isinstance(analyses, (list, tuple)) else [analyses]
    if not analyses:
        raise InputError(
            "arrival_table: no analyses given; expected at least one (kit.analyse of a run)"
        )
    for a in analyses:
        if not isinstance(a, Analysis):
            raise InputError(
                f"arrival_table: got {type(a).__name__}; expected a kit.model.Analysis "
                "(kit.analyse(run)), so the table shows the fronts the other products show"
            )
        if a.dataset is None:
            raise InputError(
                f"arrival_table: the analysis of run {a.run!r} carries no dataset; expected "
                "one made by kit.analyse(run)"
            )
    return analyses


def arrival_table(
    analyses,
    sites,
    *,
    surface=True,
    zone_centre=True,
    horizon_h=12.0,
    window_h=3.0,
    along_tolerance_km=100.0,
    miss_report_km=500.0,
    precip_threshold_mmh=PRECIP_THRESHOLD_MMH,
    max_match_h=24.0,
    return_series=False,
):
    """Site arrival table: one row per site and front passage (per run and member).

    Parameters
    ----------
    analyses : kit.model.Analysis or list of them
        The analysis of each run (:func:`kit.pipeline.analyse`), several runs
        and/or with members; its fronts, level, settings and dataset are used
        as they are (the table never runs the front analysis again).
    sites : pandas.DataFrame or str or Path
        Site list (kit.io.sites.read_sites) or its CSV path.
    surface : bool
        Move the level's line to the surface front by the slope (notes of
        :mod:`kit.science.passages`).
    zone_centre : bool
        Time the frontal zone's centre (middle of the temperature change)
        rather than its warm edge, where the locating line lies (notes of
        :mod:`kit.science.passages`).
    horizon_h : float
        Longest extrapolation past a front's last step [h].
    window_h : float
        Before/after offset of wind, temperature and freezing level [h].
    along_tolerance_km : float
        A crossing beyond a line's end by more than this is a miss [km].
    miss_report_km : float
        Misses whose line end stays farther from the site are left out [km].
    precip_threshold_mmh : float
        Precipitation rate counted as wet [mm h-1].
    max_match_h : float
        Largest timing difference when matching a front across runs [h].
    return_series : bool
        Also return the site series ``{(run, member, site): Dataset}``.

    Returns
    -------
    pandas.DataFrame
        :data:`CONTRACT_COLUMNS` then :data:`EXTRA_COLUMNS`: times UTC ISO 8601
        with Z, speeds in knots, heights in m above mean sea level (freezing
        levels) or ft above the site (cloud base), signed wind turn (positive
        clockwise), NaN/"" where a value does not apply; :data:`THIN_COLUMNS`
        where a run is thin. ``attrs`` carry ``caution`` (kit.CAUTION),
        ``runs``, ``source`` and ``thin`` (run -> ``ds.attrs["thin"]`` of each
        thin run; empty for full runs).
    """
    analyses = _analyses(analyses)
    runs = [a.dataset for a in analyses]
    if not isinstance(sites, pd.DataFrame):
        sites = read_sites(sites)
    rows, store = [], {}
    for i, (analysis, ds) in enumerate(zip(analyses, runs, strict=True)):
        run = str(ds.attrs.get("run", f"run{i + 1}"))
        fronts = list(analysis.fronts)
        level, settings = analysis.level_hpa, analysis.settings
        last_h = float(hours_since_epoch(ds["time"].values[-1]))
        first_h = float(hours_since_epoch(ds["time"].values[0]))
        for member in _members(ds):
            mfronts = [
                f for f in fronts if member is None or f.member is None or int(f.member) == member
            ]
            dsm = ds.sel(member=member) if member is not None else ds
            finder = ZoneCentre(dsm, settings) if zone_centre else None
            surface_finder = SurfaceFront(dsm, settings) if surface else None
            all_series = site_series(dsm, sites)
            for _, site in sites.iterrows():
                series = all_series[site["name"]]
                store[(run, member, site["name"])] = series
                base = {"site": site["name"], "run": run, "member": member,
                        "thin_run": str(ds.attrs.get("thin", "") or "")}
                n_miss, n_all = missing_steps(series, level)
                if n_miss == n_all:
                    rows.append(
                        {
                            **base,
                            "front_kind": "",
                            "_passage_h": np.nan,
                            "note": f"no model data at the site: values missing there at "
                            f"{level:g} hPa or near the ground at every step; passage unknown",
                        }
                    )
                    continue
                gap = (
                    f"model data missing at the site at {n_miss} of {n_all} steps" if n_miss else ""
                )
                found = find_passages(
                    mfronts,
                    series,
                    surface=surface,
                    zone_centre=zone_centre,
                    horizon_h=horizon_h,
                    along_tolerance_km=along_tolerance_km,
                    miss_report_km=miss_report_km,
                    centre_finder=finder,
                    surface_finder=surface_finder,
                )
                if not found:
                    rows.append(
                        {
                            **base,
                            "front_kind": "",
                            "_passage_h": np.nan,
                            "note": f"no front passage {format_utc(first_h)} to "
                            f"{format_utc(last_h + horizon_h)}" + (f"; {gap}" if gap else ""),
                        }
                    )
                    continue
                for p in found:
                    r = {
                        **base,
                        "front_kind": p["front_kind"],
                        "track": p["track"],
                        "level_hpa": p["level_hpa"],
                        "extrapolated": bool(p["extrapolated"]),
                        "surface_offset_km": round_or_nan(p["surface_offset_km"]),
                        "zone_centre_offset_km": round_or_nan(p["zone_centre_offset_km"]),
                        "passage_from": p.get("passage_from", ""),
                        "_passage_h": p["passage"],
                        "note": p["note"],
                    }
                    if np.isfinite(p["passage"]):
                        r["passage_utc"] = format_utc(p["passage"])
                        r["speed_kt"] = round_or_nan(p["speed_kt"])
                        r.update(
                            weather_sequence(
                                series,
                                p["passage"],
                                p["front_kind"],
                                p["speed_kt"],
                                window_h=window_h,
                                precip_threshold_mmh=precip_threshold_mmh,
                                level_hpa=p["level_hpa"] or level,
                            )
                        )
                        extra = r.pop("wind_note", "")
                        for text in (extra, _wind_note(series, r)):
                            if text:
                                r["note"] = (r["note"] + "; " if r["note"] else "") + text
                        if series.attrs.get("elevation_assumed"):
                            r["note"] = (
                                r["note"] + "; " if r["note"] else ""
                            ) + "site elevation not given: 0 m assumed"
                    if gap:
                        r["note"] = (r["note"] + "; " if r["note"] else "") + gap
                    rows.append(r)
    table = pd.DataFrame(rows)
    table = add_spread(table, max_match_h=max_match_h)
    columns = _columns(runs)
    for c in columns:
        if c not in table:
            table[c] = ""
    order = {n: k for k, n in enumerate(sites["name"])}
    table["_site_order"] = table["site"].map(order)
    table["_g"] = np.where(
        table["_group"] >= 0,
        table.groupby("_group")["_passage_h"].transform("min"),
        table["_passage_h"],
    )
    run_order = {str(ds.attrs.get("run", f"run{i + 1}")): i for i, ds in enumerate(runs)}
    table["_run_order"] = table["run"].map(run_order)
    table = table.sort_values(
        ["_site_order", "_g", "_run_order", "member"], na_position="last", kind="stable"
    )
    table["member"] = table["member"].astype("Int64")
    for c in _WHOLE_NUMBER_COLUMNS:  # whole numbers read as such; empty where missing
        table[c] = pd.to_numeric(table[c], errors="coerce").round().astype("Int64")
    table["track"] = pd.to_numeric(table["track"], errors="coerce").astype("Int64")
    for c in [
        c
        for c in columns
        if c.endswith("_utc")
        or c
        in (
            "site",
            "front_kind",
            "note",
            "snow_risk",
            "rule_rain_what",
            "runs_with_passage",
            "thin_run",
        )
    ]:
        table[c] = table[c].fillna("").astype(str)
    table["extrapolated"] = table["extrapolated"].map(
        lambda v: ("yes" if v else "no") if isinstance(v, (bool, np.bool_)) else ""
    )
    table = table[columns].reset_index(drop=True)
    table.attrs.update(
        caution=CAUTION,
        runs=[str(ds.attrs.get("run", "")) for ds in runs],
        source="; ".join(str(ds.attrs.get("source", "")) for ds in runs),
        thin={
            str(ds.attrs.get("run", f"run{i + 1}")): str(ds.attrs["thin"])
            for i, ds in enumerate(runs)
            if ds.attrs.get("thin")
        },
    )
    return (table, store) if return_series else table


# ----------------------------------------------------------------------- for people
# Forecaster-facing presentation of the arrival table: one unit per quantity (heights
# in ft, speeds in kt, times UTC as day/hour Z), empty or "-" where a value is missing.
# The CSV keeps every column in its own units; these functions only format.

#: text shown in a people's table where a value does not apply
EMPTY = "-"

#: which text of a missing value never reaches a people's product
_MISSING_TEXT = {"", "nan", "NaN", "NaT", "None", "<NA>", "none", "null"}

#: headings of :func:`people_table` (units in brackets), in order
PEOPLE_COLUMNS = [
    "Site", "Front", "Run", "Passage", "All runs", "Spread [h]", "Speed [kt]",
    "Precipitation", "FZRA/PL window", "Snow risk", "Lowest cloud [ft above site]",
    "Wind [deg/kt]", "Turn [deg]", "Temp change [C]", "0 C level [ft AMSL]", "Note",
]

#: the key headings, kept on every part when a table is split across widths
PEOPLE_KEY_COLUMNS = ["Site", "Front", "Run", "Passage"]


def is_missing(value):
    """Tell whether a cell is missing: None, NaN, NaT, pandas NA and "nan", "<NA>", ""."""
    if value is None:
        return True
    if isinstance(value, str):
        return value.strip() in _MISSING_TEXT
    try:
        return bool(pd.isna(value))
    except (TypeError, ValueError):
        return False


def _number(value):
    """Float of a cell, or None when missing or not a number."""
    if is_missing(value):
        return None
    try:
        out = float(value)
    except (TypeError, ValueError):
        return None
    return out if np.isfinite(out) else None


def day_hour(text, *, minutes=False):
    """``2031-02-03T09:40Z`` -> ``03/10Z`` (nearest hour) or ``03/0940Z``; missing -> "".

    Parameters
    ----------
    text : str or datetime-like
        A UTC time (ISO 8601, ``Z`` or naive).
    minutes : bool
        Keep the minutes rather than rounding to the hour.

    Returns
    -------
    str

    Examples
    --------
    >>> day_hour("2031-02-03T09:40Z")
    '03/10Z'
    >>> day_hour("")
    ''
    """
    if is_missing(text):
        return ""
    try:
        ts = pd.Timestamp(str(text).rstrip("Z")) if isinstance(text, str) else pd.Timestamp(text)
    except ValueError:
        return str(text)
    return format_day_hour(ts, minutes=minutes)


def time_window(start, end):
    """Two UTC times as ``14/15-18Z`` (same day) or ``14/21Z-15/03Z``; "" when both missing."""
    a, b = day_hour(start), day_hour(end)
    if not a and not b:
        return ""
    if not a or not b or a == b:
        return a or b
    if a[:3] == b[:3]:
        return f"{a[:-1]}-{b[3:]}"
    return f"{a}-{b}"


def _whole(value, step=1.0):
    v = _number(value)
    return "" if v is None else f"{round(v / step) * step:.0f}"


def _feet(value_m, *, step=100.0):
    """Metres -> feet rounded to ``step`` ft as text ("" when missing)."""
    v = _number(value_m)
    return "" if v is None else f"{round(v * FT_PER_M / step) * step:.0f}"


def _kind_name(kind):
    return {"warm": "warm front", "cold": "cold front",
            "quasi-stationary": "quasi-stationary front"}.get(str(kind), str(kind))


def precip_label(row):
    """Precipitation of a row: ``rain 13/21Z-14/09Z`` (the type when the table gives one)."""
    window = time_window(row.get("precip_start_utc"), row.get("precip_end_utc"))
    kind = "" if is_missing(row.get("precip_type")) else str(row.get("precip_type")).strip()
    if not window:
        return kind
    return f"{kind or 'precipitation'} {window}" if kind else f"precipitation {window}"


def fzra_label(row):
    """Freezing-rain / ice-pellet window ``14/15-18Z`` ("" when none)."""
    return time_window(row.get("fzra_start_utc"), row.get("fzra_end_utc"))


def snow_label(row):
    """``from 14/12Z`` when the table gives a snow risk ("" otherwise)."""
    text = "" if is_missing(row.get("snow_risk")) else str(row.get("snow_risk")).strip()
    if not text or text.lower() == "no":
        return ""
    when = text.split("from", 1)[1].strip() if "from" in text else ""
    return f"from {day_hour(when)}" if when else "yes"


def cloud_label(row):
    """Cloud base for people: a band ``1500-3200 ft`` or the lowest base ``400 ft at 14/06Z``."""
    lo, hi = _number(row.get("cloud_base_low_ft_agl")), _number(row.get("cloud_base_high_ft_agl"))
    if lo is not None and hi is not None:
        return f"{round(lo, -2):.0f}-{round(hi, -2):.0f} ft"
    low = _number(row.get("cloud_base_min_ft_agl"))
    if low is None:
        return ""
    text = "below 100 ft" if low < 50 else f"{round(low, -2):.0f} ft"
    when = day_hour(row.get("cloud_base_min_utc"))
    return f"{text} at {when}" if when else text


def wind_label(row):
    """Wind change ``150/22 -> 190/18`` [degrees from / kt] ("" when unknown)."""
    def one(d, s):
        d, s = _number(d), _number(s)
        if d is None:
            return ""
        return f"{round(d) % 360:03.0f}" + ("" if s is None else f"/{s:.0f}")

    a = one(row.get("wind_before_deg"), row.get("wind_before_kt"))
    b = one(row.get("wind_after_deg"), row.get("wind_after_kt"))
    return f"{a} -> {b}" if a and b else a or b


def freezing_label(row):
    """0 C level before -> after [ft above mean sea level, to 100 ft]."""
    a, b = _feet(row.get("freezing_level_before_m")), _feet(row.get("freezing_level_after_m"))
    return f"{a} -> {b}" if a and b else a or b


def _note_text(row, runs_window=None):
    """Return the row's note, with a "no passage" window clipped to the run's valid times."""
    note = "" if is_missing(row.get("note")) else str(row.get("note"))
    if runs_window and note.startswith("no front passage "):
        rest = note.split(";", 1)
        first, last = runs_window
        span = (f"{day_hour(first)} to {day_hour(last)}" if day_hour(first) != day_hour(last)
                else f"(one valid time, {day_hour(first)})")
        note = f"no front passage {span}" + (f";{rest[1]}" if len(rest) > 1 else "")
    return note


def newest_run(table):
    """Label of the newest run of the table (latest in ``attrs["runs"]``, else the last row's)."""
    runs = [r for r in table.attrs.get("runs", []) if r]
    if runs:
        return runs[-1]
    return str(table["run"].iloc[-1]) if "run" in table and len(table) else ""


def run_label(run, newest):
    """``14/00Z`` run label for people, ``14/00Z (newest)`` for the newest run."""
    text = str(run)
    try:
        text = pd.Timestamp(text.rstrip("Z").replace("Z", "")).strftime("%d/%HZ")
    except ValueError:
        pass
    return f"{text} (newest)" if str(run) == str(newest) else text


def people_table(table, *, runs_window=None, newest=None):
    """Format the arrival table as a briefer reads it: plain headings with units, short cells.

    Parameters
    ----------
    table : pandas.DataFrame
        From :func:`arrival_table` (or read back from its CSV); the optional
        ``precip_type``, ``cloud_base_low_ft_agl`` and ``cloud_base_high_ft_agl``
        columns are shown when present.
    runs_window : (datetime-like, datetime-like), optional
        First and last valid time of the runs, to clip "no front passage" windows.
    newest : str, optional
        Newest run label (default :func:`newest_run`); its rows are marked "(newest)".

    Returns
    -------
    pandas.DataFrame
        :data:`PEOPLE_COLUMNS`, every cell a string ("" where nothing applies):
        times UTC as day/hour Z, heights in ft, speeds in kt, whole degrees.
    """
    newest = newest if newest is not None else newest_run(table)
    rows = []
    for _, r in table.iterrows():
        r = r.to_dict()
        spread = _number(r.get("spread_h"))
        temp = _number(r.get("temp_change_c"))
        rows.append({
            "Site": str(r.get("site", "")),
            "Front": "" if is_missing(r.get("front_kind")) else str(r["front_kind"]),
            "Run": run_label(r.get("run", ""), newest) if not is_missing(r.get("run")) else "",
            "Passage": day_hour(r.get("passage_utc")) + (
                " (extrap.)" if str(r.get("extrapolated", "")) in ("yes", "True") else ""),
            "All runs": time_window(r.get("passage_earliest_utc"), r.get("passage_latest_utc"))
            if spread else "",
            "Spread [h]": "" if spread is None else f"{spread:.1f}",
            "Speed [kt]": _whole(r.get("speed_kt")),
            "Precipitation": precip_label(r),
            "FZRA/PL window": fzra_label(r),
            "Snow risk": snow_label(r),
            "Lowest cloud [ft above site]": cloud_label(r),
            "Wind [deg/kt]": wind_label(r),
            "Turn [deg]": "" if _number(r.get("wind_turn_deg")) is None
            else f"{_number(r.get('wind_turn_deg')):+.0f}",
            "Temp change [C]": "" if temp is None else f"{temp:+.1f}",
            "0 C level [ft AMSL]": freezing_label(r),
            "Note": _note_text(r, runs_window),
        })
    return pd.DataFrame(rows, columns=PEOPLE_COLUMNS)


def _newest_rows(table, newest):
    if "run" not in table:
        return table
    return table[table["run"].astype(str) == str(newest)]


def summary_table(table, *, runs_window=None, newest=None):
    """One row per site and front of the newest run: window, spread and hazards, for people.

    Parameters
    ----------
    table : pandas.DataFrame
        From :func:`arrival_table`.
    runs_window, newest
        As :func:`people_table`.

    Returns
    -------
    pandas.DataFrame
        Columns Site, Front, Passage (newest run), All runs (earliest to latest),
        Spread [h], Precipitation, FZRA/PL window, Snow risk, Lowest cloud, Wind
        [deg/kt] and 0 C level [ft AMSL]; every cell a string.
    """
    newest = newest if newest is not None else newest_run(table)
    full = people_table(_newest_rows(table, newest), runs_window=runs_window, newest=newest)
    keep = ["Site", "Front", "Passage", "All runs", "Spread [h]", "Precipitation",
            "FZRA/PL window", "Snow risk", "Lowest cloud [ft above site]", "Wind [deg/kt]",
            "0 C level [ft AMSL]"]
    out = full[keep].copy()
    no_pass = out["Passage"] == ""
    out.loc[no_pass, "Precipitation"] = full.loc[no_pass, "Note"]
    return out.reset_index(drop=True)


def site_lines(table, *, runs_window=None, newest=None, sites=None):
    """One plain-language line per site for the newest run, in the kit's own words.

    For example ``"Kelmarra: warm front about 14/04Z (all runs 14/04-07Z); precipitation
    from 14/00Z; wind 135/22 -> 183/19; cold front about 14/13Z ..."``.

    Parameters
    ----------
    table : pandas.DataFrame
        From :func:`arrival_table`.
    runs_window, newest
        As :func:`people_table`.
    sites : list of str, optional
        Site order (default: as in the table).

    Returns
    -------
    list of str
    """
    newest = newest if newest is not None else newest_run(table)
    rows = _newest_rows(table, newest)
    names = list(sites) if sites is not None else list(dict.fromkeys(rows["site"]))
    lines = []
    for name in names:
        sub = rows[rows["site"] == name]
        parts = []
        for _, r in sub.iterrows():
            r = r.to_dict()
            if is_missing(r.get("passage_utc")):
                note = _note_text(r, runs_window)
                if note and not any(p.startswith("no front passage") for p in parts):
                    parts.append(note.split(";")[0])
                continue
            bits = [f"{_kind_name(r['front_kind'])} about {day_hour(r['passage_utc'])}"]
            window = time_window(r.get("passage_earliest_utc"), r.get("passage_latest_utc"))
            if _number(r.get("spread_h")):
                bits[0] += f" (all runs {window})"
            if str(r.get("extrapolated", "")) in ("yes", "True"):
                bits[0] += " (extrapolated past the run's last step)"
            start = day_hour(r.get("precip_start_utc"))
            kind = "" if is_missing(r.get("precip_type")) else str(r["precip_type"])
            if start:
                bits.append(f"{kind or 'precipitation'} from {start}")
            fz = fzra_label(r)
            if fz:
                bits.append(f"freezing rain or ice pellets possible {fz}")
            snow = snow_label(r)
            if snow:
                bits.append(f"snow risk {snow}")
            wind = wind_label(r)
            if wind:
                bits.append(f"wind {wind} kt")
            parts.append("; ".join(bits))
        lines.append(f"{name}: " + (" | ".join(parts) if parts else "no passage listed"))
    return lines


def clean_text(value):
    """Return a cell for a people's product: missing values (NaN, NaT, None, <NA>) as ""."""
    return "" if is_missing(value) else str(value)
