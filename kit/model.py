"""The kit's results as typed, frozen records: Front, Track, Analysis.

A front is found once (:mod:`kit.science.fronts`), then each later step of the
pipeline (:mod:`kit.pipeline`) returns *new* fronts with one more part filled
in, never writing into the old ones:

- ``detection`` (:class:`FrontDetection`): how the line was found;
- ``link`` (:class:`TrackLink`): its place in a track over lead time;
- ``motion`` (:class:`FrontMotion`): the speeds three ways;
- ``structure`` (:class:`FrontStructure`): the slope of the frontal surface.

:attr:`Front.props` flattens the filled parts into one plain mapping for the
GeoJSON and CSV exports (keys and order as the exports have always had them).
An :class:`Analysis` holds every front of one run on one level, with the
settings it was made with; every product of a shift is made from one Analysis.

Decision support only: the official forecast, local regulations and licensed or
authorised practice take precedence.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from kit import CAUTION
from kit.constants import KT_PER_MS
from kit.errors import InputError
from kit.timefmt import iso_seconds

__all__ = [
    "FrontDetection",
    "TrackLink",
    "FrontMotion",
    "FrontStructure",
    "Front",
    "Track",
    "Analysis",
    "FRONT_KINDS",
    "json_float",
    "json_clean",
    "front_properties",
    "fronts_table",
    "motion_table",
]

#: vertex arrays of a front, read-only once the front is made
VERTEX_FIELDS = ("lon", "lat", "tfp", "grad", "normal_east", "normal_north", "vn")

#: the kinds of front the kit types (WMO symbols for each in kit.charts.style)
FRONT_KINDS = ("warm", "cold", "quasi-stationary", "occluded")


def json_float(x, ndigits=3):
    """Return ``x`` rounded to ``ndigits``, or None where missing or not finite (no NaN in JSON)."""
    if x is None:
        return None
    x = float(x)
    return round(x, ndigits) if math.isfinite(x) else None


def json_clean(value, digits=4):
    """JSON-safe value: NaN/inf -> None, numpy -> Python, floats to significant digits."""
    if value is None:
        return None
    if isinstance(value, (np.datetime64, pd.Timestamp)):
        return iso_seconds(value)
    if isinstance(value, (bool, np.bool_)):
        return bool(value)
    if isinstance(value, (int, np.integer)):
        return int(value)
    if isinstance(value, (float, np.floating)):
        v = float(value)
        if not math.isfinite(v):
            return None
        return float(f"{v:.{digits}g}") if v != 0 else 0.0
    if isinstance(value, np.ndarray):
        return [json_clean(x, digits) for x in value.tolist()]
    if isinstance(value, (list, tuple)):
        return [json_clean(x, digits) for x in value]
    if isinstance(value, dict):
        return {str(k): json_clean(v, digits) for k, v in value.items()}
    return value if isinstance(value, str) else str(value)


@dataclass(frozen=True)
class FrontDetection:
    """How a front line was found (:func:`kit.science.fronts.find_fronts`).

    Attributes
    ----------
    field : str
        Thermal field the line was located in (``"theta_w"`` or ``"theta"``).
    smoothing_km : float
        Effective smoothing length of that field [km].
    tfp_mean_K_100km2, grad_mean_K_100km : float
        Length-weighted mean thermal front parameter [K (100 km)-2] and
        gradient magnitude [K (100 km)-1] along the line.
    steering_level_hpa : float
        Level of the wind that typed the line [hPa].
    k1_K_100km2, k2_K_100km : float or None
        The two thresholds the masks used [K (100 km)-2], [K (100 km)-1].
    thresholds_from : str or None
        ``"published"``, ``"quantiles"`` or ``"given"``.
    cyclonic_vorticity_share, cyclonic_shear_share, trough_share : float or None
        Share of the line length [0..1] with cyclonic relative vorticity, with
        cyclonic along-front shear and in a pressure trough at the steering
        level (:mod:`kit.science.signature`); None where not evaluable.
    signature_share : float or None
        Share with (vorticity or shear) and trough: the confirmation criterion.
    trough_field : str or None
        Field the trough was looked for in (``"mslp"`` or ``"z850"`` ...).
    """

    field: str
    smoothing_km: float
    tfp_mean_K_100km2: float
    grad_mean_K_100km: float
    steering_level_hpa: float
    k1_K_100km2: float | None = None
    k2_K_100km: float | None = None
    thresholds_from: str | None = None
    cyclonic_vorticity_share: float | None = None
    cyclonic_shear_share: float | None = None
    trough_share: float | None = None
    signature_share: float | None = None
    trough_field: str | None = None


@dataclass(frozen=True)
class TrackLink:
    """A front's place in its track (:func:`kit.science.motion.track_fronts`).

    Attributes
    ----------
    event : str
        ``"new"``, ``"continues"``, ``"split"`` or ``"merge"``.
    parent : int or None
        Track id of the line it came from at the previous valid time.
    speed_tracked_ms : float or None
        Normal displacement speed of the line [m s-1], positive toward the
        cold side; None where the track has one time only.
    vn_tracked : tuple of (float or None)
        The same per vertex [m s-1].
    """

    event: str
    parent: int | None
    speed_tracked_ms: float | None
    vn_tracked: tuple = ()


@dataclass(frozen=True)
class FrontMotion:
    """Speeds three ways (:func:`kit.science.motion.speeds_three_ways`), m s-1, + toward cold."""

    speed_tracked_ms: float | None
    speed_wind_ms: float | None
    speed_geostrophic_normal_ms: float | None
    speed_geostrophic_rule_ms: float | None
    speed_rule_source: str
    speed_flag: str


@dataclass(frozen=True)
class FrontStructure:
    """Slope of the frontal surface (:func:`kit.science.structure.add_slopes`), N of 1 in N."""

    slope_1_in: float | None
    slope_scatter: float | None
    slope_margules_1_in: float | None
    slope_typical_1_in: float | None


@dataclass(frozen=True, eq=False)
class Front:
    """One front line at one valid time on one level.

    Vertex arrays all have the same length ``n`` and are read-only; east/north
    components are in the local tangent plane. Lines from
    :func:`kit.science.fronts.find_fronts` run with the cold side on their left
    (the normal is the left-hand normal of the direction of travel), so symbols
    can be drawn on a known side. A front is never changed: use
    :meth:`replace` for a copy with other values.

    Attributes
    ----------
    lon, lat : ndarray (n,)
        Vertices [degrees]; longitude in -180..180 unless the grid is contiguous
        across the dateline, then it follows the grid (wrap it when exporting).
    kind : str
        ``"warm"``, ``"cold"``, ``"quasi-stationary"`` or ``"occluded"``.
    valid_time : numpy.datetime64
        Valid time (UTC).
    level_hpa : float
        Pressure level the front was located on [hPa].
    tfp : ndarray (n,)
        Thermal front parameter at each vertex [K m-2].
    grad : ndarray (n,)
        Magnitude of the smoothed thermal gradient at each vertex [K m-1].
    normal_east, normal_north : ndarray (n,)
        Unit normal pointing to the cold side [1].
    vn : ndarray (n,)
        Wind component along ``normal`` at the steering level [m s-1]; positive
        means the wind blows toward the cold side (warm advection).
    speed_ms : float
        Length-weighted mean of ``vn`` [m s-1]; sign as ``vn``.
    length_km : float
        Great-circle length of the line [km].
    run : str or None
        Run label (``ds.attrs["run"]``).
    member : int or None
        Ensemble member where the run has several.
    track : int or None
        Track id shared over lead times (set by tracking).
    detection, link, motion, structure
        The parts later steps fill in (module docstring); None until then.
    low_track : int or None
        Track id of the low the front belongs to (``Analysis.centres``), where
        one does (:func:`kit.science.centres.assign_lows`).
    """

    lon: np.ndarray
    lat: np.ndarray
    kind: str
    valid_time: np.datetime64
    level_hpa: float
    tfp: np.ndarray
    grad: np.ndarray
    normal_east: np.ndarray
    normal_north: np.ndarray
    vn: np.ndarray
    speed_ms: float
    length_km: float
    run: str | None = None
    member: int | None = None
    track: int | None = None
    detection: FrontDetection | None = None
    link: TrackLink | None = None
    motion: FrontMotion | None = None
    structure: FrontStructure | None = None
    low_track: int | None = None

    def __post_init__(self):
        n = None
        for name in VERTEX_FIELDS:
            arr = np.asarray(getattr(self, name), dtype=float)
            if arr.flags.writeable:  # a caller's array: keep a read-only copy
                arr = arr.copy()
                arr.setflags(write=False)
            object.__setattr__(self, name, arr)
            if n is None:
                n = arr.shape
            elif arr.shape != n:
                raise InputError(
                    f"Front: {name} has shape {arr.shape}; expected {n} like lon "
                    "(one value per vertex)"
                )
        if self.kind not in FRONT_KINDS:
            raise InputError(
                f"Front: kind {self.kind!r}; expected 'warm', 'cold', 'quasi-stationary' "
                "or 'occluded'"
            )
        object.__setattr__(self, "valid_time", np.datetime64(self.valid_time, "ns"))

    def replace(self, **changes) -> Front:
        """Return a copy of this front with ``changes`` applied (this one is not changed)."""
        return dataclasses.replace(self, **changes)

    @property
    def props(self) -> dict:
        """Flat dict of the filled parts, as the GeoJSON/CSV exports write them.

        A new dict at each call: changing it does not change the front.
        """
        out: dict[str, Any] = {}
        d = self.detection
        if d is not None:
            out.update(
                field=d.field,
                smoothing_km=d.smoothing_km,
                tfp_mean_K_100km2=d.tfp_mean_K_100km2,
                grad_mean_K_100km=d.grad_mean_K_100km,
                steering_level_hpa=d.steering_level_hpa,
            )
            if d.k1_K_100km2 is not None:
                out["k1_K_100km2"] = d.k1_K_100km2
            if d.k2_K_100km is not None:
                out["k2_K_100km"] = d.k2_K_100km
            for name in (
                "thresholds_from",
                "cyclonic_vorticity_share",
                "cyclonic_shear_share",
                "trough_share",
                "signature_share",
                "trough_field",
            ):
                value = getattr(d, name)
                if value is not None:
                    out[name] = round(value, 3) if isinstance(value, float) else value
        if self.link is not None:
            out.update(
                track_event=self.link.event,
                track_parent=self.link.parent,
                speed_tracked_ms=self.link.speed_tracked_ms,
                vn_tracked=list(self.link.vn_tracked),
            )
        if self.motion is not None:
            out.update(dataclasses.asdict(self.motion))
        if self.structure is not None:
            out.update(dataclasses.asdict(self.structure))
        if self.low_track is not None:
            out["low_track"] = int(self.low_track)
        return out

    @property
    def speed_tracked_ms(self) -> float | None:
        """Best available displacement speed of the line [m s-1]: tracked, else None."""
        if self.motion is not None and self.motion.speed_tracked_ms is not None:
            return self.motion.speed_tracked_ms
        if self.link is not None:
            return self.link.speed_tracked_ms
        return None

    @property
    def motion_speed_ms(self) -> float | None:
        """Speed the line moves at [m s-1], + toward the cold side.

        The tracked speed once the front has been tracked or had its speeds
        measured (None where its track has one time only); for a front that
        went through neither, the front-normal wind ``speed_ms``.
        """
        if self.link is None and self.motion is None:
            return float(self.speed_ms)
        return self.speed_tracked_ms

    @property
    def speed_best_ms(self) -> float:
        """The one speed given to people [m s-1], + toward the cold side.

        The tracked speed where the front's track has two or more times, else
        the front-normal steering wind ``speed_ms`` (:attr:`speed_source` says
        which). Map labels, ``speed_kt`` in fronts.csv and GeoJSON, and the
        notebook tables all give this one quantity.
        """
        tracked = self.speed_tracked_ms
        if tracked is not None and math.isfinite(tracked):
            return float(tracked)
        return float(self.speed_ms)

    @property
    def speed_source(self) -> str:
        """Where :attr:`speed_best_ms` comes from: ``"tracked"`` or ``"front-normal wind"``."""
        tracked = self.speed_tracked_ms
        return "tracked" if tracked is not None and math.isfinite(tracked) else "front-normal wind"


@dataclass(frozen=True)
class Track:
    """One front followed over lead time: its fronts in valid-time order.

    Attributes
    ----------
    track_id : int
    fronts : tuple of Front
        One or more per valid time (a track keeps one line per time; a split's
        other lines start tracks of their own).
    """

    track_id: int
    fronts: tuple

    @property
    def valid_times(self) -> tuple:
        """The valid times the track is seen at, in order."""
        return tuple(sorted({f.valid_time for f in self.fronts}))

    @property
    def kinds(self) -> tuple:
        """The kind at each valid time, in order."""
        return tuple(f.kind for f in sorted(self.fronts, key=lambda f: f.valid_time))


@dataclass(frozen=True, eq=False)
class Analysis:
    """Every front of one run on one level, made once, read by every product.

    Build it with :func:`kit.pipeline.analyse`; products take it and never
    re-run the front analysis.

    Attributes
    ----------
    fronts : tuple of Front
        Every front of every member and valid time.
    run : str or None
        Run label.
    level_hpa : float
        Level the fronts were located on [hPa].
    settings : kit.science.fronts.FrontSettings
        The settings used.
    valid_times : tuple of numpy.datetime64
        Every valid time of the run that was analysed (a time with no front is
        still listed).
    members : tuple
        Members analysed; ``(None,)`` for a deterministic run.
    dataset : xarray.Dataset or None
        The canonical run the fronts came from (products sample it).
    steps : tuple of str
        The pipeline steps applied (``"find"``, ``"track"``, ``"speeds"``, ``"slopes"``).
    centres : tuple of kit.science.centres.CentreTrack
        Lows and highs of the run's MSLP tracked over its valid times (empty
        without MSLP); fronts name their low by ``Front.low_track``.
    caution : str
        :data:`kit.CAUTION`.
    """

    fronts: tuple
    run: str | None
    level_hpa: float
    settings: Any
    valid_times: tuple = ()
    members: tuple = (None,)
    dataset: Any = dataclasses.field(default=None, repr=False)
    steps: tuple = ()
    centres: tuple = ()
    caution: str = CAUTION

    def __post_init__(self):
        object.__setattr__(self, "fronts", tuple(self.fronts))
        object.__setattr__(self, "centres", tuple(self.centres))
        for fr in self.fronts:
            if not isinstance(fr, Front):
                raise InputError(f"Analysis: got {type(fr).__name__}; expected Front objects")

    def __len__(self):
        return len(self.fronts)

    def __iter__(self):
        return iter(self.fronts)

    def at(self, valid_time=None, *, member=None, kind=None) -> list:
        """Return the fronts at one valid time (all where None), of one member and kind."""
        t = None if valid_time is None else np.datetime64(valid_time, "ns")
        return [
            f
            for f in self.fronts
            if (t is None or f.valid_time == t)
            and (member is None or f.member == member)
            and (kind is None or f.kind == kind)
        ]

    def tracks(self) -> dict:
        """Return track id -> :class:`Track` for every tracked front."""
        by_id: dict[int, list] = {}
        for f in self.fronts:
            if f.track is not None:
                by_id.setdefault(int(f.track), []).append(f)
        return {
            k: Track(k, tuple(sorted(v, key=lambda f: f.valid_time)))
            for k, v in sorted(by_id.items())
        }

    def front_ids(self) -> list:
        """Return (track, valid time, member, kind, first vertex) of every front."""
        return [
            (f.track, str(f.valid_time), f.member, f.kind,
             round(float(f.lon[0]), 4), round(float(f.lat[0]), 4))
            for f in self.fronts
        ]

    def table(self):
        """One row per front with speeds (m/s and kt) and slopes: :func:`motion_table`."""
        return motion_table(self.fronts)


def people_speed(fr):
    """Return the speed columns of one front, the same in every product.

    ``speed_ms`` [m s-1, one decimal] is :attr:`Front.speed_best_ms`, signed
    (+ toward the cold side, the CF/GeoJSON contract); for people ``speed_kt``
    is its size in whole knots and ``moving_toward`` says which way
    (``"cold side"``, ``"warm side"``; a cold front advancing moves toward the
    warm side); ``speed_source`` says whether the speed was tracked or is the
    front-normal wind; ``speed_wind_ms`` keeps the wind-based speed (the
    speeds step's when it ran, else the detection's front-normal wind).
    """
    best = fr.speed_best_ms
    if not math.isfinite(best):
        return {"speed_ms": None, "speed_kt": None, "moving_toward": None,
                "speed_source": None, "speed_wind_ms": None}
    wind = float(fr.speed_ms)
    own = None if fr.motion is None else fr.motion.speed_wind_ms
    if own is not None and math.isfinite(own):
        wind = float(own)  # the speeds step's own wind-based speed
    return {
        "speed_ms": round(best, 1),
        "speed_kt": int(round(abs(best) * KT_PER_MS)),
        "moving_toward": "cold side" if best >= 0 else "warm side",
        "speed_source": fr.speed_source,
        "speed_wind_ms": round(wind, 1) if math.isfinite(wind) else None,
    }


def front_properties(fr):
    """Return the GeoJSON properties of one front: identity, then ``fr.props``, JSON-clean."""
    props = {
        "kind": fr.kind,
        "valid_time": iso_seconds(fr.valid_time),
        "level_hpa": json_clean(fr.level_hpa),
        "length_km": None if not math.isfinite(fr.length_km) else round(float(fr.length_km), 1),
        **people_speed(fr),
        "track": None if fr.track is None else int(fr.track),
        "run": fr.run,
        "member": None if fr.member is None else int(fr.member),
    }
    for k, v in fr.props.items():
        if k not in props:
            props[k] = json_clean(v)
    return props


def fronts_table(fronts):
    """One row per front.

    Parameters
    ----------
    fronts : list of Front

    Returns
    -------
    pandas.DataFrame
        Columns ``kind, valid_time, level_hpa, length_km``, the speed columns
        of :func:`people_speed` (``speed_ms, speed_kt, moving_toward,
        speed_source, speed_wind_ms``), ``track, run, member`` then every key
        of ``props``; ``attrs["caution"]`` holds :data:`kit.CAUTION`.
    """
    base = [
        "kind",
        "valid_time",
        "level_hpa",
        "length_km",
        "speed_ms",
        "speed_kt",
        "moving_toward",
        "speed_source",
        "speed_wind_ms",
        "track",
        "run",
        "member",
    ]
    rows = []
    for fr in fronts:
        if not isinstance(fr, Front):
            raise InputError(f"fronts_table: got {type(fr).__name__}; expected Front objects")
        row = {
            "kind": fr.kind,
            "valid_time": pd.Timestamp(fr.valid_time),
            "level_hpa": float(fr.level_hpa),
            "length_km": float(fr.length_km),
            **people_speed(fr),
            "track": pd.NA if fr.track is None else int(fr.track),
            "run": fr.run,
            "member": pd.NA if fr.member is None else int(fr.member),
        }
        for k, v in fr.props.items():
            if k not in row:
                row[k] = v
        rows.append(row)
    df = pd.DataFrame(rows)
    if df.empty:
        df = pd.DataFrame(columns=base)
    df.attrs["caution"] = CAUTION
    return df


def motion_table(fronts):
    """One row per front with the speeds three ways in m/s and knots and the slopes.

    :func:`fronts_table` without the per-vertex ``vn_tracked``, plus
    ``speed_tracked_kt``, ``speed_wind_kt``, ``speed_geostrophic_rule_kt`` [kt,
    whole knots] (positive toward the cold side); every speed in m/s to one
    decimal; ``attrs["caution"]`` holds :data:`kit.CAUTION`.
    """
    df = fronts_table(fronts)
    df = df.drop(columns=[c for c in ("vn_tracked",) if c in df])  # per-vertex lists
    for name in ("speed_tracked", "speed_wind", "speed_geostrophic_normal",
                 "speed_geostrophic_rule"):
        col = f"{name}_ms"
        if col in df:
            values = pd.to_numeric(df[col], errors="coerce").astype(float)
            df[col] = values.round(1)
            df[f"{name}_kt"] = (values * KT_PER_MS).round(0)
    df.attrs["caution"] = CAUTION
    return df
