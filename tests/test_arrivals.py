"""Tests of kit.products.arrivals: passage timing, weather sequence, spread.

Sources of expected values are given beside each check:
[pub] published, [lib] reference library, [trade] common practice, no source,
[analytic] exact by construction of the synthetic field (the truth is the
prescribed motion, not a number taken from invented data), [regression] the
invented demo scenario (sample_grids/truth.json), labelled as such.
"""

import json
import math
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import xarray as xr

from kit.constants import T0_K
from kit.errors import InputError
from kit.model import Analysis, Front, FrontStructure, TrackLink
from kit.pipeline import analyse
from kit.products.arrivals import CONTRACT_COLUMNS, add_spread, arrival_table
from kit.science.fronts import FrontSettings
from kit.science.passages import format_utc, signed_distance_km, site_series
from kit.science.thermo import freezing_level, warm_layer_aloft

R_KM = 6371.0088
T0 = np.datetime64("2027-01-14T00:00", "ns")
LEVELS = np.array([1000.0, 925.0, 850.0, 700.0, 500.0])
ZONE_L_KM = 60.0  # half-width L of the synthetic tanh zone [km]
DT_K = 6.0  # temperature contrast across it [K]
EDGE_X = math.atanh(1 / math.sqrt(3))  # TFP peak at 0.658 L (REFERENCES.md, analytic)


def std_height(p_hpa):
    """ICAO standard-atmosphere height of a pressure level [m] (troposphere; ICAO 1993)."""
    return 44330.8 * (1.0 - (p_hpa / 1013.25) ** 0.190263)


def front_lon(t_h, *, lon_site, lat_site, speed_ms, passage_h):
    """Longitude of a meridional front moving east at ``speed_ms``; over the site at passage_h."""
    km = speed_ms * 3.6 * (t_h - passage_h)
    return lon_site + math.degrees(km / (R_KM * math.cos(math.radians(lat_site))))


def make_run(
    *,
    kind="cold",
    lat_site=50.0,
    lon_site=0.0,
    speed_ms=10.0,
    passage_h=7.6,
    hours=None,
    run="2027-01-14T00Z",
    winter=False,
    members=None,
    grid_step=0.5,
):
    """Synthetic canonical run: a meridional front (straight N-S) moving east.

    Cold front: cold air west (behind); warm front: cold air east (ahead).
    Southern hemisphere when ``lat_site`` < 0: the v wind is mirrored.
    ``members``: list of passage-time offsets [h], one member each.
    Returns (ds, fronts) where fronts is a list of Front with track ids.
    """
    hours = np.arange(0, 37, 3) if hours is None else hours
    sh = lat_site < 0
    lat = np.arange(lat_site - 10, lat_site + 10 + 1e-9, grid_step)
    lon = np.arange(lon_site - 15, lon_site + 15 + 1e-9, grid_step)
    offsets = [0.0] if members is None else list(members)
    times = T0 + (hours * 3600).astype("timedelta64[s]")
    nm, nt, nl, ny, nx = len(offsets), len(hours), len(LEVELS), lat.size, lon.size
    shape4 = (nm, nt, nl, ny, nx)
    t = np.empty(shape4)
    td = np.empty(shape4)
    u = np.empty(shape4)
    v = np.empty(shape4)
    z = np.broadcast_to(std_height(LEVELS)[None, None, :, None, None], shape4).copy()
    t2m, td2m, u10, v10, pr, mslp = (np.empty((nm, nt, ny, nx)) for _ in range(6))
    fronts = []
    coslat = np.cos(np.radians(lat))[:, None]
    for m, off in enumerate(offsets):
        for k, h in enumerate(hours):
            lf = front_lon(
                h,
                lon_site=lon_site,
                lat_site=lat_site,
                speed_ms=speed_ms,
                passage_h=passage_h + off,
            )
            x = np.radians(lon[None, :] - lf) * R_KM * coslat  # km east of the front
            warm_side = x > 0 if kind == "cold" else x < 0
            s = np.tanh(x / ZONE_L_KM) * (1 if kind == "cold" else -1)  # +1 on the warm side
            tsfc = 278.0 + 3.0 * s  # 6 K contrast
            if winter:
                tsfc = tsfc - 9.0
            for j, p in enumerate(LEVELS):
                lapse = 0.0065 * std_height(p)
                t[m, k, j] = tsfc - lapse
                if winter and p in (925.0, 850.0):  # warm layer aloft over sub-zero ground air
                    t[m, k, j] = 276.5 - (0 if p == 925.0 else 2.0)
                td[m, k, j] = t[m, k, j] - 0.3  # near-saturated: theta-w follows t
            t2m[m, k] = tsfc
            td2m[m, k] = tsfc - 2.0
            # ahead (warm side for a cold front): SW 15 m/s; behind: NW 12 m/s (NH)
            ua = (
                np.where(warm_side, 10.6, 8.5) if kind == "cold" else np.where(warm_side, 10.6, 7.0)
            )
            va = (
                np.where(warm_side, 10.6, -8.5)
                if kind == "cold"
                else np.where(warm_side, 10.6, 7.0)
            )
            if sh:
                va = -va
            u10[m, k], v10[m, k] = ua, va
            u[m, k] = ua[None] * 1.5
            v[m, k] = va[None] * 1.5
            # rain band: cold front 150 km behind to 50 km ahead; warm front 400 km ahead
            band = (x > -150.0) & (x < 50.0) if kind == "cold" else (x > 0.0) & (x < 400.0)
            pr[m, k] = np.where(band, 3.0, 0.0)
            mslp[m, k] = 100500.0
            flat = np.linspace(lat[0] + 1, lat[-1] - 1, 25)
            # the locating line lies 0.658 L on the warm side of the zone centre
            # (REFERENCES.md analytic check); warm side east of a cold front
            edge_deg = math.degrees(
                EDGE_X * ZONE_L_KM / (R_KM * math.cos(math.radians(lat_site)))
            ) * (1 if kind == "cold" else -1)
            flon = np.full(
                flat.size,
                front_lon(
                    h,
                    lon_site=lon_site,
                    lat_site=lat_site,
                    speed_ms=speed_ms,
                    passage_h=passage_h + off,
                )
                + edge_deg,
            )
            ncold = -1.0 if kind == "cold" else 1.0
            sp = speed_ms * (-1 if kind == "cold" else 1)  # positive toward the cold side
            fronts.append(
                Front(
                    lon=flon,
                    lat=flat,
                    kind=kind,
                    valid_time=times[k],
                    level_hpa=850.0,
                    # analytic tanh zone at the locating line [K m-2], [K m-1]
                    tfp=np.full(flat.size, 2 / (3 * math.sqrt(3)) * DT_K / (ZONE_L_KM * 1e3) ** 2),
                    grad=np.full(flat.size, DT_K / (3 * ZONE_L_KM * 1e3)),
                    normal_east=np.full(flat.size, ncold),
                    normal_north=np.zeros(flat.size),
                    vn=np.full(flat.size, sp),
                    speed_ms=sp,
                    length_km=2000.0,
                    run=run,
                    member=(m if members is not None else None),
                    track=1,
                    link=TrackLink("continues", 1, sp),
                )
            )
    coords = {"time": times, "level": LEVELS, "lat": lat, "lon": lon}
    dims4, dims3 = ("time", "level", "lat", "lon"), ("time", "lat", "lon")
    sel = (lambda a: a[0]) if members is None else (lambda a: a)
    if members is not None:
        coords["member"] = np.arange(nm)
        dims4, dims3 = ("member",) + dims4, ("member",) + dims3
    ds = xr.Dataset(
        {
            "t": (dims4, sel(t)),
            "td": (dims4, sel(td)),
            "u": (dims4, sel(u)),
            "v": (dims4, sel(v)),
            "z": (dims4, sel(z)),
            "t2m": (dims3, sel(t2m)),
            "td2m": (dims3, sel(td2m)),
            "u10": (dims3, sel(u10)),
            "v10": (dims3, sel(v10)),
            "precip": (dims3, sel(pr)),
            "mslp": (dims3, sel(mslp)),
        },
        coords=coords,
        attrs={"run": run, "source": "synthetic test field", "grid": "latlon"},
    )
    ds = ds.assign_coords(reference_time=T0)
    return ds, fronts


def analysis_of(ds, fronts, level=850.0):
    """The Analysis a product takes, made by hand from a synthetic run and its fronts."""
    members = tuple(int(m) for m in ds["member"].values) if "member" in ds.dims else (None,)
    return Analysis(fronts=tuple(fronts), run=ds.attrs.get("run"), level_hpa=level,
                    settings=FrontSettings(), valid_times=tuple(ds["time"].values),
                    members=members, dataset=ds)


def site_frame(lat=50.0, lon=0.0, name="Testsite", elevation_m=0.0):
    return pd.DataFrame({"name": [name], "lat": [lat], "lon": [lon], "elevation_m": [elevation_m]})


def hours_of(text):
    return (np.datetime64(text.rstrip("Z")) - T0) / np.timedelta64(1, "h")


# ------------------------------------------------------------ passage timing


@pytest.mark.parametrize("kind", ["cold", "warm"])
def test_analytic_passage_between_steps(kind):
    """[analytic] front moving at 10 m/s prescribed to cross the site at 07:36Z.

    07:36Z lies between the 06Z and 09Z steps, so the interpolation is used.
    Tolerance 10 minutes (the task's requirement).
    """
    ds, fronts = make_run(kind=kind, passage_h=7.6)
    table = arrival_table([analysis_of(ds, fronts)], site_frame(), surface=False)
    row = table.iloc[0]
    assert row["front_kind"] == kind
    assert abs(hours_of(row["passage_utc"]) - 7.6) <= 10 / 60
    # speed over the site: 10 m/s = 19.4 kt [analytic; 1 kt = 1852 m / 3600 s, exact]
    assert row["speed_kt"] == pytest.approx(10 * 3600 / 1852, abs=0.6)
    assert row["extrapolated"] == "no"


def test_surface_projection_from_slope():
    """[trade] surface front lies h*N on the warm side of the 850 hPa line.

    Cold front, slope 1:50 given in props, 850 hPa at its ICAO height (1457 m)
    over a 0 m site: 72.9 km ahead, at 10 m/s 2.02 h earlier [analytic].
    """
    ds, fronts = make_run(kind="cold", passage_h=12.0)
    ds = ds.drop_vars(["t2m", "td2m"])  # no 2-m field: the surface front is estimated
    fronts = [f.replace(structure=FrontStructure(50.0, None, None, 50.0)) for f in fronts]
    row = arrival_table([analysis_of(ds, fronts)], site_frame(), surface=True).iloc[0]
    shift_km = std_height(850.0) * 50.0 / 1000.0
    assert row["surface_offset_km"] == pytest.approx(shift_km, abs=1.0)
    assert hours_of(row["passage_utc"]) == pytest.approx(12.0 - shift_km / 36.0, abs=10 / 60)
    assert row["passage_from"].startswith("estimated: 850 hPa line")


@pytest.mark.parametrize("kind, sign", [("cold", -1.0), ("warm", +1.0)])
def test_surface_estimate_uses_the_run_height_above_an_elevated_site(kind, sign):
    """Issue 17 item 3 [analytic]: without 2-m fields the surface front is h * N from the
    850-hPa line, h the run's own height of 850 hPa above the site (not the standard
    height above sea level). Heights 250 m above standard, a site at 600 m:
    h = 1457 + 250 - 600 = 1107 m; slope 1:50 -> 55.4 km, at 36 km/h 1.54 h ahead of
    the line's zone centre for a cold front (earlier), behind for a warm front (later)."""
    ds, fronts = make_run(kind=kind, passage_h=12.0)
    ds = ds.drop_vars(["t2m", "td2m"])
    ds["z"] = ds["z"] + 250.0
    fronts = [f.replace(structure=FrontStructure(50.0, None, None, 50.0)) for f in fronts]
    site = site_frame(elevation_m=600.0)
    row = arrival_table([analysis_of(ds, fronts)], site, surface=True).iloc[0]
    h_m = std_height(850.0) + 250.0 - 600.0
    shift_km = h_m * 50.0 / 1000.0
    assert row["surface_offset_km"] == pytest.approx(shift_km, abs=1.0)
    assert hours_of(row["passage_utc"]) == pytest.approx(12.0 + sign * shift_km / 36.0,
                                                         abs=10 / 60)


@pytest.mark.parametrize("kind", ["cold", "warm"])
def test_surface_front_measured_in_the_2m_field(kind):
    """Issue 16: one surface front. With 2-m fields the passage is that of the 2-m zone's
    centre (this run's 2-m zone is centred on the line's zone: crossing at 12 UTC), even
    though the slope would move an estimate 2 h earlier (cold) or later (warm)."""
    ds, fronts = make_run(kind=kind, passage_h=12.0)
    fronts = [f.replace(structure=FrontStructure(50.0, None, None, 50.0)) for f in fronts]
    row = arrival_table([analysis_of(ds, fronts)], site_frame(), surface=True).iloc[0]
    assert row["passage_from"] == "centre of the 2 m theta-w zone"
    # 10 km profile spacing on a 0.5-degree grid, 10 m/s: within 15 minutes
    assert hours_of(row["passage_utc"]) == pytest.approx(12.0, abs=0.25)


def test_zone_centre_factor_against_tanh_zone():
    """[pub, derived] REFERENCES.md: for tau = (dT/2) tanh(x/L) the TFP peaks at
    0.385 dT/L^2 at x = 0.658 L. Found here numerically with scipy [lib]; the
    line-to-centre factor x / (|grad tau| / TFP) must equal ZONE_CENTRE_FACTOR."""
    from scipy.optimize import minimize_scalar

    from kit.constants import ZONE_CENTRE_FACTOR

    def tfp(x):  # dT = L = 1; -d|grad tau|/dx on the warm side
        return np.tanh(x) / np.cosh(x) ** 2

    best = minimize_scalar(
        lambda x: -tfp(x), bounds=(0, 3), method="bounded", options={"xatol": 1e-10}
    )
    assert best.x == pytest.approx(0.658, abs=5e-4)
    assert tfp(best.x) == pytest.approx(0.385, abs=5e-4)
    grad = 0.5 / np.cosh(best.x) ** 2
    assert best.x / (grad / tfp(best.x)) == pytest.approx(ZONE_CENTRE_FACTOR, rel=1e-6)


@pytest.mark.parametrize("kind", ["cold", "warm"])
def test_warm_edge_versus_zone_centre(kind):
    """[analytic] the locating line runs 0.658 L = 39.5 km on the warm side of the
    zone centre: at 10 m/s its passage is 1.10 h earlier (cold front, warm side
    ahead) or later (warm front, warm side behind) than the centre's."""
    ds, fronts = make_run(kind=kind, passage_h=12.0)
    centre = arrival_table([analysis_of(ds, fronts)], site_frame(), surface=False).iloc[0]
    edge = arrival_table([analysis_of(ds, fronts)], site_frame(), surface=False, zone_centre=False).iloc[0]
    lag = EDGE_X * ZONE_L_KM / 36.0
    assert abs(hours_of(centre["passage_utc"]) - 12.0) <= 10 / 60
    assert centre["zone_centre_offset_km"] == pytest.approx(EDGE_X * ZONE_L_KM, abs=1.0)
    sign = -1 if kind == "cold" else 1
    assert hours_of(edge["passage_utc"]) == pytest.approx(12.0 + sign * lag, abs=10 / 60)


def test_extrapolation_flagged_and_limited():
    """[analytic] passage 4 h after the last step is extrapolated; 20 h after is not."""
    hours = np.arange(0, 25, 3)
    ds, fronts = make_run(kind="cold", passage_h=28.0, hours=hours)
    row = arrival_table([analysis_of(ds, fronts)], site_frame(), surface=False, horizon_h=12).iloc[0]
    assert row["extrapolated"] == "yes"
    assert abs(hours_of(row["passage_utc"]) - 28.0) <= 10 / 60
    ds, fronts = make_run(kind="cold", passage_h=44.0, hours=hours)
    row = arrival_table([analysis_of(ds, fronts)], site_frame(), surface=False, horizon_h=12).iloc[0]
    assert row["front_kind"] == "" and row["passage_utc"] == ""
    assert "no front passage" in row["note"]


def test_front_misses_site():
    """A line ending 3 degrees north of the site passes north of it: no passage, one
    note row; a line ending 6 degrees north (> miss_report_km) is not worth a row."""

    def cut(fronts, lat_min):
        names = ("lon", "lat", "tfp", "grad", "normal_east", "normal_north", "vn")
        return [f.replace(**{a: getattr(f, a)[f.lat > lat_min] for a in names}) for f in fronts]

    ds, fronts = make_run(kind="cold", passage_h=10.0)
    fronts = cut(fronts, 53.0)
    table = arrival_table([analysis_of(ds, fronts)], site_frame(), surface=False)
    assert len(table) == 1
    row = table.iloc[0]
    assert row["passage_utc"] == "" and row["front_kind"] == "cold"
    assert "cold front passes" in row["note"] and " N of site" in row["note"]
    ds, fronts = make_run(kind="cold", passage_h=10.0)
    fronts = cut(fronts, 56.0)
    row = arrival_table([analysis_of(ds, fronts)], site_frame(), surface=False).iloc[0]
    assert row["front_kind"] == "" and "no front passage" in row["note"]


def test_signed_distance_sign_and_size():
    """[lib] distance from a meridian at 1 degree longitude at 50N: pyproj Geod of the
    perpendicular foot agrees within 0.5 km; sign positive on the cold side."""
    import pyproj  # required: a missing one must fail
    ds, fronts = make_run(kind="cold", passage_h=100.0)  # front far west at t=0
    f = fronts[0].replace(lon=np.full_like(fronts[0].lat, -1.0))
    g = signed_distance_km(f, 50.0, 0.0)
    # site east of a cold front: warm side -> negative
    assert g["d_km"] < 0
    geod = pyproj.Geod(ellps="sphere", a=R_KM * 1000.0, b=R_KM * 1000.0)
    lats = np.linspace(49.0, 51.0, 20001)
    _, _, dist = geod.inv(
        np.zeros_like(lats), np.full_like(lats, 50.0), np.full_like(lats, -1.0), lats
    )
    assert -g["d_km"] == pytest.approx(dist.min() / 1000.0, abs=0.5)


def test_no_track_ids_is_input_error():
    ds, fronts = make_run()
    fronts = [f.replace(track=None) for f in fronts]
    with pytest.raises(InputError, match="no track id"):
        arrival_table([analysis_of(ds, fronts)], site_frame())


# ------------------------------------------------------------ weather sequence


def test_wind_turn_veers_nh_backs_sh():
    """[trade] cold front: wind veers at passage in the northern hemisphere and
    backs in the southern (REFERENCES.md, 'the sense of turning reverses').
    Prescribed winds: SW (225) ahead, NW (315) behind -> +90 [analytic]."""
    ds, fronts = make_run(kind="cold", passage_h=12.0)
    nh = arrival_table([analysis_of(ds, fronts)], site_frame(), surface=False).iloc[0]
    ds, fronts = make_run(kind="cold", passage_h=12.0, lat_site=-50.0)
    sh = arrival_table([analysis_of(ds, fronts)], site_frame(lat=-50.0), surface=False).iloc[0]
    assert nh["wind_before_deg"] == pytest.approx(225, abs=1)
    assert nh["wind_after_deg"] == pytest.approx(315, abs=1)
    assert nh["wind_turn_deg"] == pytest.approx(90, abs=1)
    assert nh["wind_turn_deg"] > 0 and sh["wind_turn_deg"] < 0
    assert sh["wind_turn_deg"] == pytest.approx(-nh["wind_turn_deg"], abs=1)
    # temperature falls by the prescribed 6 K contrast (tanh zone, 3 h = 108 km either side)
    assert nh["temp_change_c"] == pytest.approx(-6.0 * math.tanh(108 / 60), abs=0.2)
    # freezing level falls behind the cold front [trade]
    assert nh["freezing_level_after_m"] < nh["freezing_level_before_m"]


@pytest.mark.parametrize("hours, passage_h, steps", [
    (np.arange(0, 37, 6), 10.0, ("06:00", "12:00")),  # 6-hourly output
    (np.arange(0, 37, 3), 1.0, ("00:00", "04:00")),  # passage an hour after the start
])
def test_wind_turn_on_sparse_output(hours, passage_h, steps):
    """Issue 16 item 10: where the +/-3 h window is not in the run or would mix both sides
    (6-hourly steps), the wind before and after comes from the nearest model steps, and
    the row says so; the prescribed SW -> NW veer (+90) is still given [analytic]."""
    ds, fronts = make_run(kind="cold", passage_h=passage_h, hours=hours)
    row = arrival_table([analysis_of(ds, fronts)], site_frame(), surface=False).iloc[0]
    assert row["passage_utc"], row["note"]
    assert row["wind_turn_deg"] == pytest.approx(90, abs=5)
    assert row["wind_before_deg"] == pytest.approx(225, abs=5)
    assert f"2027-01-14T{steps[0]}Z and 2027-01-14T{steps[1]}Z" in row["note"]
    assert "wind before/after from" in row["note"]


def test_precip_start_end_total():
    """[analytic] cold-front band from 50 km ahead to 150 km behind the line, 3 mm/h,
    speed 36 km/h: wet from 1.4 h before to 4.2 h after passage; the field is
    sampled every 3 h, so start and end are right to within one step."""
    ds, fronts = make_run(kind="cold", passage_h=12.0)
    row = arrival_table([analysis_of(ds, fronts)], site_frame(), surface=False).iloc[0]
    start, end = hours_of(row["precip_start_utc"]), hours_of(row["precip_end_utc"])
    assert abs(start - (12.0 - 1.4)) <= 3.0
    assert abs(end - (12.0 + 4.2)) <= 3.0
    assert row["precip_total_mm"] == pytest.approx(3.0 * (end - start), abs=0.01)
    # rule of thumb for cold fronts: heaviest 50-100 nm behind at 19.4 kt [trade]
    kt = 10 * 3600 / 1852
    tp = hours_of(row["passage_utc"])
    assert hours_of(row["rule_rain_from_utc"]) == pytest.approx(tp + 50 / kt, abs=3 / 60)
    assert hours_of(row["rule_rain_to_utc"]) == pytest.approx(tp + 100 / kt, abs=3 / 60)


def test_warm_front_rule_of_thumb_onset():
    """[trade] warm front rain onset 200-300 nm ahead: onset = passage - distance/speed."""
    ds, fronts = make_run(kind="warm", passage_h=24.0, speed_ms=8.0)
    row = arrival_table([analysis_of(ds, fronts)], site_frame(), surface=False).iloc[0]
    kt = 8 * 3600 / 1852  # the prescribed speed [analytic]
    tp = hours_of(row["passage_utc"])
    assert abs(tp - 24.0) <= 10 / 60
    assert hours_of(row["rule_rain_from_utc"]) == pytest.approx(tp - 300 / kt, abs=3 / 60)
    assert hours_of(row["rule_rain_to_utc"]) == pytest.approx(tp - 200 / kt, abs=3 / 60)
    assert row["rule_rain_what"].startswith("rain onset")


def test_freezing_rain_window_found_and_absent():
    """Winter profile: -6 C at 2 m, +3.35 C at 925 hPa -> a warm layer aloft over sub-zero
    air, the freezing-rain / ice-pellet set-up [trade]; the ordinary profile has none."""
    ds, fronts = make_run(kind="warm", passage_h=24.0, speed_ms=8.0, winter=True)
    row = arrival_table([analysis_of(ds, fronts)], site_frame(), surface=False).iloc[0]
    assert row["fzra_start_utc"] != "" and row["fzra_end_utc"] != ""
    assert hours_of(row["fzra_start_utc"]) <= hours_of(row["fzra_end_utc"]) <= 24.0 + 3
    assert row["fzra_warm_layer_max_c"] == pytest.approx(276.5 - 273.15, abs=0.05)
    ds, fronts = make_run(kind="warm", passage_h=24.0, speed_ms=8.0, winter=False)
    row = arrival_table([analysis_of(ds, fronts)], site_frame(), surface=False).iloc[0]
    assert row["fzra_start_utc"] == "" and np.isnan(row["fzra_warm_layer_max_c"])


def test_column_helpers_analytic():
    """[analytic] linear lapse rate 6.5 K/km from +5 C at 0 m: 0 C at 769.2 m;
    a warm nose between 500 m (+0 C) and 1500 m found; all sub-zero -> the ground.
    (The site columns use kit.science.thermo's freezing_level and warm_layer_aloft.)"""
    z = np.array([0.0, 500.0, 1000.0, 1500.0, 3000.0])
    tc = 5.0 - 0.0065 * z
    assert freezing_level(tc + T0_K, z) == pytest.approx(5.0 / 0.0065, rel=1e-9)
    nose = np.array([-4.0, 0.0, 2.0, 0.0, -10.0])
    top, base, tmax, cold = warm_layer_aloft(nose + T0_K, z, cold_min=True)
    assert (base, top) == (500.0, 1500.0)
    assert (tmax - T0_K, cold - T0_K) == (pytest.approx(2.0, abs=1e-9),
                                          pytest.approx(-4.0, abs=1e-9))
    assert freezing_level(-np.abs(tc) - 1 + T0_K, z) == 0.0
    assert np.isnan(freezing_level(np.full(5, 3.0) + T0_K, z))
    assert all(np.isnan(warm_layer_aloft(tc + T0_K, z, cold_min=True)))


def test_snow_risk_when_wet_bulb_zero_low():
    """[trade] wet-bulb 0 C level under 300 m above the site while precipitating -> snow risk."""
    ds, fronts = make_run(kind="cold", passage_h=12.0)
    for var in ("t", "td", "t2m", "td2m"):
        ds[var] = ds[var] - 12.0
    row = arrival_table([analysis_of(ds, fronts)], site_frame(), surface=False).iloc[0]
    assert row["snow_risk"].startswith("yes")
    ds, fronts = make_run(kind="cold", passage_h=12.0)
    for var in ("t", "td", "t2m", "td2m"):  # +6 K: cold air 7.85 C at 2 m, wet-bulb 0 C > 900 m
        ds[var] = ds[var] + 6.0
    row = arrival_table([analysis_of(ds, fronts)], site_frame(), surface=False).iloc[0]
    assert row["snow_risk"] == "no"


def test_site_series_bilinear_matches_scipy():
    """[lib] bilinear interpolation equals scipy RegularGridInterpolator (linear)."""
    from scipy.interpolate import RegularGridInterpolator

    ds, _ = make_run()
    site = {"name": "Off-node", "lat": 50.37, "lon": 0.81, "elevation_m": 120.0}
    s = site_series(ds, site)
    ref = RegularGridInterpolator((ds["lat"].values, ds["lon"].values), ds["t2m"].values[4])
    assert s["t2m"].values[4] == pytest.approx(ref([[50.37, 0.81]])[0], abs=1e-9)
    assert s.attrs["elevation_m"] == 120.0
    # cloud base above the site: saturated column near the front -> 0 ft at the surface? no:
    # 2-m RH is below 95 % here, so the base is above the ground
    assert np.all((s["cloud_base_m"].values >= 0) | np.isnan(s["cloud_base_m"].values))


def test_site_series_dateline_grid():
    """A grid contiguous across the dateline (170E..190E) takes a site at -175."""
    ds, _ = make_run(lon_site=180.0)
    s = site_series(ds, {"name": "Across", "lat": 50.0, "lon": -175.0})
    ref = ds["t2m"].interp(lat=50.0, lon=185.0).values
    np.testing.assert_allclose(s["t2m"].values, ref, atol=1e-9)
    assert s.attrs["elevation_assumed"] == 1


def test_site_off_grid_is_input_error():
    ds, fronts = make_run()
    with pytest.raises(InputError, match=r"site 'Farside' .* off the grid"):
        arrival_table([analysis_of(ds, fronts)], site_frame(lat=10.0, name="Farside"))


# -------------------------------------------------------------------- spread


def test_members_spread():
    """[analytic] three members whose fronts pass 0, +1.5 and -2 h apart: earliest,
    median, latest and spread 3.5 h."""
    ds, fronts = make_run(kind="cold", passage_h=12.0, members=[0.0, 1.5, -2.0])
    table = arrival_table([analysis_of(ds, fronts)], site_frame(), surface=False)
    assert len(table) == 3
    assert set(table["member"]) == {0, 1, 2}
    assert table["spread_h"].tolist() == pytest.approx([3.5] * 3, abs=10 / 60)
    r = table.iloc[0]
    assert hours_of(r["passage_earliest_utc"]) == pytest.approx(10.0, abs=10 / 60)
    assert hours_of(r["passage_median_utc"]) == pytest.approx(12.0, abs=10 / 60)
    assert hours_of(r["passage_latest_utc"]) == pytest.approx(13.5, abs=10 / 60)
    assert (table["runs_with_passage"] == "3/3").all()


def test_two_runs_spread_and_unmatched():
    """Two runs: the same cold front 2.5 h apart matches; a front in one run only
    stays alone with no spread."""
    a, fa = make_run(kind="cold", passage_h=12.0, run="2027-01-14T00Z")
    b, fb = make_run(kind="cold", passage_h=14.5, run="2027-01-13T12Z")
    table = arrival_table([analysis_of(a, fa), analysis_of(b, fb)], site_frame(), surface=False)
    assert table["spread_h"].tolist() == pytest.approx([2.5, 2.5], abs=10 / 60)
    t = pd.DataFrame(
        {
            "site": ["S", "S", "S"],
            "front_kind": ["cold", "cold", "warm"],
            "run": ["a", "b", "a"],
            "member": [None] * 3,
            "_passage_h": [10.0, 11.0, 5.0],
        }
    )
    out = add_spread(t)
    assert out["spread_h"].iloc[:2].tolist() == [1.0, 1.0]
    assert np.isnan(out["spread_h"].iloc[2]) and out["runs_with_passage"].iloc[2] == "1/2"


def test_contract_columns_and_formats():
    ds, fronts = make_run(kind="cold", passage_h=12.0)
    table = arrival_table([analysis_of(ds, fronts)], site_frame(), surface=False)
    assert list(table.columns[: len(CONTRACT_COLUMNS)]) == CONTRACT_COLUMNS
    for c in [c for c in table.columns if c.endswith("_utc")]:
        vals = [v for v in table[c] if v]
        assert all(v.endswith("Z") and len(v) == 17 for v in vals), c
    assert "Decision support only" in table.attrs["caution"]
    assert format_utc(np.datetime64("2027-01-14T06:29:40")) == "2027-01-14T06:30Z"
    assert format_utc(float("nan")) == ""


# ------------------------------------------------------------ timeline figure


def test_timeline_figure_content():
    """The timeline carries run, valid period, source, caution, the site, the four panels'
    labels and a vertical line per passage in the front's WMO colour."""
    import matplotlib  # noqa: F401 - required: a missing one must fail

    from kit import CAUTION
    from kit.charts.style import FRONT_COLOURS, stamp_texts
    from kit.charts.timelines import timeline_figure

    a, fa = make_run(kind="warm", passage_h=12.0, speed_ms=8.0, winter=True, grid_step=1.0)
    b, fb = make_run(
        kind="warm", passage_h=14.5, speed_ms=8.0, winter=True, grid_step=1.0, run="2027-01-13T12Z"
    )
    table, store = arrival_table([analysis_of(a, fa), analysis_of(b, fb)], site_frame(name="Harrowdene"), surface=False, return_series=True
    )
    fig = timeline_figure(store[("2027-01-14T00Z", None, "Harrowdene")], table)
    texts = " | ".join(stamp_texts(fig))
    for want in (
        "Run 2027-01-14T00Z",
        "Valid Thu 14 Jan 2027 00:00 UTC",
        "T+0 h to +36 h",
        "Source: synthetic test field",
        CAUTION,
        "Harrowdene",
        "[mm/h]",
        "[ft above site]",
        "valid time [UTC]",
        "warm front 14/12Z",  # day/hour Z on a multi-day axis (issue 16)
    ):
        assert want in texts, want
    ax_t = fig.axes[0]
    vlines = [ln for ln in ax_t.get_lines() if len(set(ln.get_xdata())) == 1]
    styles = sorted((ln.get_color(), ln.get_linestyle()) for ln in vlines)
    assert styles == [(FRONT_COLOURS["warm"], "-"), (FRONT_COLOURS["warm"], "--")]
    legend = [t.get_text() for t in fig.axes[3].get_legend().get_texts()]
    assert any("FZRA" in t for t in legend)


# ---------------------------------------------------- regression: demo scenario
# [regression] the invented demo scenario of tools.scenario (sample_grids/), not a
# science reference: it checks that the whole chain (loader, front finding,
# tracking, slopes, passages) reproduces the passages the scenario was built with.

SAMPLE = Path(__file__).resolve().parents[1] / "sample_grids"


@pytest.fixture(scope="module")
def scenario_table():
    from kit.io.runs import open_run

    runs = [open_run(SAMPLE / "runs" / name) for name in ("2027-01-14T00Z", "2027-01-13T12Z")]
    table, store = arrival_table([analyse(ds) for ds in runs], SAMPLE / "sites.csv",
                                 return_series=True)
    truth = json.loads((SAMPLE / "truth.json").read_text())
    return table, store, truth


def _truth_error_h(row, truth):
    when = truth["sets"][row["run"]]["passages"][row["site"]][row["front_kind"]]
    if when is None:
        return None
    return (np.datetime64(row["passage_utc"][:-1]) - np.datetime64(when[:-1])) / np.timedelta64(
        1, "h")


@pytest.mark.slow
def test_scenario_passages_within_a_quarter_hour(scenario_table):
    """[regression] every warm- and cold-front passage of sample_grids/truth.json is in
    the table of both runs, most within 0.25 h: the table's surface front is the centre of
    the 2-m theta-w zone, measured on the run's grid and referred to the site's ground
    (issue 16, one definition), and the scenario's truth is when the site's own 2-m theta-w changes fastest at its elevation
    (issue 17: the sites are on land at their elevations, up to 746 m; no allowance is
    subtracted)."""
    table, store, truth = scenario_table
    checked, errors = 0, []
    end = np.datetime64(truth["valid_times"][-1][:-1])
    for run in ("2027-01-14T00Z", "2027-01-13T12Z"):
        for site, kinds in truth["sets"][run]["passages"].items():
            for kind in ("warm", "cold"):
                if kinds[kind] is None or np.datetime64(kinds[kind][:-1]) > end:
                    continue
                rows = table[(table["run"] == run) & (table["site"] == site)
                             & (table["front_kind"] == kind) & (table["passage_utc"] != "")]
                assert len(rows), f"{run} {site}: no {kind} passage (truth {kinds[kind]})"
                err = min((_truth_error_h(r, truth) for _, r in rows.iterrows()), key=abs)
                assert rows["passage_from"].eq("centre of the 2 m theta-w zone").all()
                errors.append(abs(err))
                checked += 1
    assert checked >= 16  # 9 of the 12 site-front pairs cross in each run's window
    errors = np.array(errors)
    print(f"passage errors against the scenario truth: median {np.median(errors):.2f} h, "
          f"worst {errors.max():.2f} h, {np.mean(errors <= 0.25):.0%} within 0.25 h")
    # measured 2026-12 on the life-cycle event, the truth being the time the site's
    # own 2-m theta-w changes fastest (tools.scenario._station_step), the table's
    # profile referred to the site's ground (sections.refer_to_height) and the
    # crossing fitted with a parabola through neighbouring steps: median 0.07 h,
    # 16 of 18 within 0.25 h, worst 0.32 h (Lorvaine's warm front in the first
    # step of a run; Drevanholm's over the cold pool it scours out, 0.27 h)
    assert np.median(errors) <= 0.15 and np.mean(errors <= 0.25) >= 0.85
    assert errors.max() <= 0.4, errors.max()
    assert store  # the site series of every run were kept


@pytest.mark.slow
def test_scenario_occlusion_site(scenario_table):
    """[regression] the site the occluded front crosses (truth.json, no warm or cold
    passage there): the kit has no occluded kind yet (issue 19), so it times the lines
    through the occlusion as warm or cold; each such passage lies within 4 h of the
    occlusion's and no site crossed by warm and cold fronts gets one it should not."""
    table, _, truth = scenario_table
    occluded = 0
    end = np.datetime64(truth["valid_times"][-1][:-1])
    for _, r in table[table["passage_utc"] != ""].iterrows():
        kinds = truth["sets"][r["run"]]["passages"][r["site"]]
        if kinds[r["front_kind"]] is not None:
            continue
        if np.datetime64(r["passage_utc"][:-1]) > end:
            # beyond the run: the table extrapolates a dying front at its speed
            # and says so (the truth ends each front where its contrast halves)
            assert r["extrapolated"] == "yes", (r["run"], r["site"], r["front_kind"])
            continue
        assert kinds["occluded"] is not None, f"{r['run']} {r['site']}: a {r['front_kind']} passage"
        gap = (np.datetime64(r["passage_utc"][:-1]) - np.datetime64(kinds["occluded"][:-1])) / (
            np.timedelta64(1, "h"))
        assert abs(gap) <= 4.0, (r["run"], r["site"], gap)
        occluded += 1
    assert occluded >= 2


@pytest.mark.slow
def test_scenario_spread_equals_run_offsets(scenario_table):
    """[regression] the two runs' built-in timing offsets differ by 3.5 h
    (truth.json timing_offsets_h): spread_h within 1 h of it for every passage of a
    warm or cold front the truth has in both runs."""
    table, _, truth = scenario_table
    offs = truth["timing_offsets_h"]
    want = abs(offs["2027-01-14T00Z"] - offs["2027-01-13T12Z"])
    checked = 0
    for (site, kind), rows in table.groupby(["site", "front_kind"]):
        both = all(truth["sets"][r]["passages"][site].get(kind) for r in offs if r != "analyses")
        if not both:
            continue
        spread = rows["spread_h"].astype(float)
        # each run's passage within 0.75 h (test above): the spread within 1 h
        assert np.allclose(spread, want, atol=1.0), (site, kind, list(spread))
        assert (rows["runs_with_passage"] == "2/2").all()
        checked += 1
    assert checked >= 9


@pytest.mark.slow
def test_scenario_freezing_rain_site(scenario_table):
    """[regression] the scenario builds a freezing-rain set-up ahead of the warm
    front at one site (truth.json freezing_rain_site): the table finds the window
    in both runs, with air above 0 C aloft, ending by the warm front's passage
    (within one 3-h step). (Its neighbour 115 km away shows a brief warm nose
    too; the fields have it, so it is not checked for absence.)"""
    table, _, truth = scenario_table
    site = truth["freezing_rain_site"]
    rows = table[(table["site"] == site) & (table["front_kind"] == "warm")]
    assert len(rows) == 2 and (rows["fzra_start_utc"] != "").all()
    assert (rows["fzra_warm_layer_max_c"].astype(float) > 0).all()
    for _, r in rows.iterrows():
        end = np.datetime64(r["fzra_end_utc"][:-1])
        assert end <= np.datetime64(r["passage_utc"][:-1]) + np.timedelta64(3, "h")
    # against the truth window (its first and last 10-min step): the table flags a
    # model step when precipitation falls over the step ending there, the truth
    # starts at 0.1 mm/h: within one 3-h step and half an hour (measured 3.0 and
    # 3.5 h early at the start, 0.3 h at the end)
    for _, r in rows.iterrows():
        window = truth["sets"][r["run"]]["freezing_rain_window"]
        for edge in ("start", "end"):
            gap = np.datetime64(r[f"fzra_{edge}_utc"][:-1]) - np.datetime64(window[edge][:-1])
            assert abs(gap) <= np.timedelta64(210, "m"), (r["run"], edge, gap)
    # profiles without a warm layer aloft over sub-zero air: the coastal site far from
    # the cold pool
    lor = table[(table["site"] == "Lorvaine")]
    assert (lor["fzra_start_utc"] == "").all()


def test_every_column_is_described():
    from kit.products.arrivals import COLUMN_NOTES, EXTRA_COLUMNS

    assert set(COLUMN_NOTES) == set(CONTRACT_COLUMNS + EXTRA_COLUMNS)


def test_passage_across_the_dateline_southern_hemisphere():
    """[analytic] a cold front crossing 180 degrees at 45 S on a grid contiguous across
    the dateline (165..195 E), site given as -179.5: passage at the prescribed 07:36Z
    within 10 minutes; the wind backs (southern hemisphere) [trade]."""
    ds, fronts = make_run(kind="cold", passage_h=7.6, lat_site=-45.0, lon_site=180.5)
    table = arrival_table([analysis_of(ds, fronts)], site_frame(lat=-45.0, lon=-179.5), surface=False)
    row = table.iloc[0]
    assert row["front_kind"] == "cold"
    assert abs(hours_of(row["passage_utc"]) - 7.6) <= 10 / 60
    assert row["wind_turn_deg"] < 0


def test_site_series_projected_grid():
    """[lib] on a Lambert conformal grid (pyproj) a field linear in x and y is
    interpolated exactly at the site (bilinear), and the profile work runs."""
    import pyproj  # required: a missing one must fail
    crs = pyproj.CRS.from_proj4("+proj=lcc +lat_1=45 +lat_2=55 +lat_0=50 +lon_0=5 +R=6371000")
    to_ll = pyproj.Transformer.from_crs(crs, "EPSG:4326", always_xy=True)
    x = np.arange(-300e3, 300e3 + 1, 20e3)
    y = np.arange(-200e3, 200e3 + 1, 20e3)
    xx, yy = np.meshgrid(x, y)
    lon2, lat2 = to_ll.transform(xx, yy)
    times = T0 + np.arange(3) * np.timedelta64(3, "h")
    shape3, shape4 = (3, y.size, x.size), (3, LEVELS.size, y.size, x.size)
    t2m = 275.0 + 1e-5 * xx + 2e-5 * yy
    tcol = 280.0 - 0.0065 * std_height(LEVELS)
    ds = xr.Dataset(
        {
            "t": (("time", "level", "y", "x"), np.broadcast_to(tcol[None, :, None, None], shape4)),
            "td": (
                ("time", "level", "y", "x"),
                np.broadcast_to(tcol[None, :, None, None] - 2, shape4),
            ),
            "z": (
                ("time", "level", "y", "x"),
                np.broadcast_to(std_height(LEVELS)[None, :, None, None], shape4),
            ),
            "t2m": (("time", "y", "x"), np.broadcast_to(t2m, shape3)),
            "td2m": (("time", "y", "x"), np.broadcast_to(t2m - 2, shape3)),
        },
        coords={
            "time": times,
            "level": LEVELS,
            "y": y,
            "x": x,
            "lat": (("y", "x"), lat2),
            "lon": (("y", "x"), lon2),
        },
        attrs={"grid": "projected", "run": "2027-01-14T00Z", "source": "synthetic"},
    )
    px, py = 57.3e3, -81.9e3
    plon, plat = to_ll.transform(px, py)
    s = site_series(ds, {"name": "Grimsay Knoll", "lat": plat, "lon": plon, "elevation_m": 0.0})
    np.testing.assert_allclose(s["t2m"].values, 275.0 + 1e-5 * px + 2e-5 * py, atol=2e-3)
    # 0 C level of the column: 280 K - 6.5 K/km, 6.85 C at the ground -> ~1054 m [analytic]
    assert np.all(np.abs(s["freezing_level_m"].values - 6.85 / 0.0065) < 60)


def test_light_wind_turn_flagged():
    """[trade] a wind turn in light air is flagged as uncertain (common practice)."""
    ds, fronts = make_run(kind="cold", passage_h=12.0)
    ds["u10"] = ds["u10"] * 0.1  # 1.5 m/s = 2.9 kt
    ds["v10"] = ds["v10"] * 0.1
    row = arrival_table([analysis_of(ds, fronts)], site_frame(), surface=False).iloc[0]
    assert "turn uncertain" in row["note"]


def test_site_in_missing_data_says_so():
    """A site where the run has no values (NaN patch) is not told 'no front passage'."""
    ds, fronts = make_run(kind="cold", passage_h=12.0)
    patch = dict(lat=slice(48.0, 52.0), lon=slice(-2.0, 2.0))
    for var in ("t", "td", "t2m", "td2m"):
        ds[var].loc[patch] = np.nan
    row = arrival_table([analysis_of(ds, fronts)], site_frame(), surface=False).iloc[0]
    assert row["passage_utc"] == "" and "no model data at the site" in row["note"]
    ds, fronts = make_run(kind="cold", passage_h=12.0)
    ds["t2m"][{"time": 0}] = np.nan  # one step missing: passage kept, gap named
    row = arrival_table([analysis_of(ds, fronts)], site_frame(), surface=False).iloc[0]
    assert row["passage_utc"] and "missing at the site at 1 of 13 steps" in row["note"]


def test_timeline_of_one_step_without_surface_fields():
    """A one-step run without 2-m fields and precipitation still draws: each empty
    panel says what the run lacks and the figure says no front passed."""
    import matplotlib  # noqa: F401 - required: a missing one must fail

    from kit.charts.style import stamp_texts
    from kit.charts.timelines import timeline_figure

    ds, fronts = make_run(kind="cold", passage_h=60.0, hours=np.array([0]), grid_step=1.0)
    ds = ds.drop_vars(["t2m", "td2m", "precip"])
    table, store = arrival_table([analysis_of(ds, fronts)], site_frame(name="Ollerby Cross"), surface=False, return_series=True
    )
    fig = timeline_figure(store[("2027-01-14T00Z", None, "Ollerby Cross")], table)
    texts = " | ".join(stamp_texts(fig))
    assert "2 m temperature and dew point not in this run" in texts
    assert "precipitation not in this run" in texts
    assert "no front passage" in texts


def test_cloud_base_is_a_band_between_the_column_points():
    """Issue 16 item 5: the base is given only to the band the model column resolves
    (2 m, then pressure levels hundreds of metres apart), never as a finer value."""
    from kit.science.passages import _cloud_band

    z = np.array([10.0, 120.0, 780.0, 1460.0, 3010.0])  # 2 m, 1000, 925, 850, 700 hPa [m]
    rh = np.array([0.80, 0.85, 0.90, 0.97, 0.99])
    assert _cloud_band(z, rh, 0.95) == (780.0, 1460.0)  # between 925 and 850 hPa
    rh_fog = np.array([0.98, 0.99, 0.90, 0.97, 0.99])
    assert _cloud_band(z, rh_fog, 0.95) == (10.0, 120.0)  # from the ground up
    assert all(np.isnan(_cloud_band(z, np.full(5, 0.5), 0.95)))


def test_table_cloud_band_bounds_its_lowest_base():
    ds, fronts = make_run(kind="warm", passage_h=12.0)
    row = arrival_table([analysis_of(ds, fronts)], site_frame()).iloc[0]
    lo, hi = row["cloud_base_low_ft_agl"], row["cloud_base_high_ft_agl"]
    # this synthetic run is saturated at 2 m ahead of its warm front: from the ground
    # to the next point of the column (1000 hPa, about 110 m = 400 ft above the site)
    assert (lo, hi) == (0.0, 400.0)
    assert row["cloud_base_min_ft_agl"] == lo
