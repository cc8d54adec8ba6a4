"""Can a run's fronts be trusted? A plausibility report for any run.

For every member, level and valid time: how many fronts, how dense, and how
often their line length carries a frontal flow signature (cyclonic
vorticity, cyclonic along-front shear, a pressure trough;
:mod:`kit.science.signature`), each against a baseline of random points
drawn with the same theta-w gradient distribution; and the share of line
length in places where fronts should not be (tropics, below ground, domain
edge) or in pieces too short to trust.

``lift = (share - baseline) / (1 - baseline)``: 0 is chance, 1 is every
point. The report judges a run; it is no verification against observations.

Computation only: no graphics.
"""

import numpy as np
import pandas as pd

from kit.errors import InputError
from kit.science import geo
from kit.science.domain import TROPICS_LAT, grid_lat, grid_lon
from kit.science.fronts import (
    FrontSettings,
    analysis_fields,
    effective_smoothing_km,
    level_index,
)
from kit.science.signature import baseline_points, signature_at
from kit.timefmt import iso_minutes

__all__ = ["REPORT_COLUMNS", "plausibility_report", "pooled_summary", "lift"]

#: report columns, in order (shares are of line length, 0..1)
REPORT_COLUMNS = [
    "member",
    "level_hpa",
    "valid_time",
    "n_fronts",
    "fronts_per_1e7_km2",
    "line_km",
    "vorticity_share",
    "vorticity_baseline",
    "vorticity_lift",
    "shear_share",
    "shear_baseline",
    "shear_lift",
    "trough_share",
    "trough_baseline",
    "trough_lift",
    "tropical_share",
    "below_ground_share",
    "edge_share",
    "short_share",
    "masked_below_ground_share",
    "masked_tropics_share",
    "masked_edge_share",
    "below_ground_source",
    "trough_field",
]

_SIGNS = ("vorticity", "shear", "trough")


def lift(share, baseline):
    """Return (share - baseline) / (1 - baseline); NaN where undefined."""
    if not (np.isfinite(share) and np.isfinite(baseline)) or baseline >= 1.0:
        return float("nan")
    return float((share - baseline) / (1.0 - baseline))


def _share(flag, w):
    tot = float(np.sum(w))
    return float(np.sum(w * flag) / tot) if tot > 0 else float("nan")


def plausibility_report(ds, fronts, *, level=None, settings=None, seed=0, n_random=2000):
    """Plausibility figures of the fronts of one run, per member, level and time.

    Parameters
    ----------
    ds : xarray.Dataset
        The canonical run the fronts were found in.
    fronts : list of kit.model.Front
        Its fronts (any levels, members and times; those of ``ds``).
    level : float or None
        Level [hPa]; None: every level the fronts are on.
    settings : FrontSettings, optional
        The settings the fronts were found with (domain masks, smoothing).
    seed : int
        Seed of the random baseline points (the report is reproducible).
    n_random : int
        Random points per time for the baseline.

    Returns
    -------
    pandas.DataFrame
        :data:`REPORT_COLUMNS`, one row per member, level and valid time;
        ``attrs`` carry the grid length, smoothing and minimum piece used.
    """
    s = settings or FrontSettings()
    grid = geo.grid_of(ds)
    sampler = geo.PointSampler(ds)
    lat_all, lon_all = grid_lat(grid), grid_lon(grid)
    x_km = geo.grid_length_km(ds)
    short_km = 3.0 * x_km
    rng = np.random.default_rng(seed)
    levels = sorted({float(f.level_hpa) for f in fronts}) if level is None else [float(level)]
    if not levels:
        levels = [850.0] if level is None else levels
    members = list(np.asarray(ds["member"].values)) if "member" in ds.dims else [None]
    by_key = {}
    for fr in fronts:
        key = (fr.member, float(fr.level_hpa), np.datetime64(fr.valid_time, "ns"))
        by_key.setdefault(key, []).append(fr)
    rows = []
    for lev in levels:
        level_index(ds, lev, "report level")
        for rec in analysis_fields(ds, lev, s, members):
            t = np.datetime64(rec.time, "ns")
            frs = by_key.get((rec.member, lev, t), [])
            flow = rec.flow()
            dom = ~rec.excluded
            dom_km2 = float(np.sum(rec.cell_area[dom])) / 1e6
            row = {
                "member": rec.member,
                "level_hpa": lev,
                "valid_time": iso_minutes(t),
                "n_fronts": len(frs),
                "fronts_per_1e7_km2": len(frs) / dom_km2 * 1e7 if dom_km2 > 0 else np.nan,
                "masked_below_ground_share": float(np.mean(rec.below_ground))
                if rec.below_ground is not None
                else np.nan,
                "masked_tropics_share": float(np.mean(rec.tropics)),
                "masked_edge_share": float(np.mean(rec.edge)),
                "below_ground_source": rec.below_ground_source,
                "trough_field": None if flow is None else flow.pressure_name,
            }
            if not frs:
                row["line_km"] = 0.0
                rows.append(row)
                continue
            lon = np.concatenate([f.lon for f in frs])
            lat = np.concatenate([f.lat for f in frs])
            w = np.concatenate([geo.vertex_weights_km(f.lon, f.lat) for f in frs])
            ne = np.concatenate([f.normal_east for f in frs])
            nn = np.concatenate([f.normal_north for f in frs])
            grad = np.concatenate([np.asarray(f.grad, float) for f in frs])
            short = np.concatenate([np.full(f.lon.size, f.length_km < short_km) for f in frs])
            row["line_km"] = float(sum(f.length_km for f in frs))
            row["tropical_share"] = _share(np.abs(lat) < TROPICS_LAT, w)
            row["short_share"] = _share(short, w)
            j, i = sampler.index(lon, lat)
            if rec.below_ground_strict is not None:
                bg = sampler.sample_index(rec.below_ground_strict.astype(float), j, i, nan="skip")
                row["below_ground_share"] = _share(bg > 0.5, w)
            edge = sampler.sample_index(rec.edge.astype(float), j, i, method="nearest")
            row["edge_share"] = _share(edge > 0.5, w)
            if flow is not None:
                sig = signature_at(flow, lon, lat, ne, nn)
                wv = np.where(sig["valid"], w, 0.0)
                g = rec.fields["grad"].astype(float)
                copies = np.maximum(1, np.round(w / max(np.median(w), 1e-9))).astype(int)
                reps = np.repeat(grad, copies)  # length-weighted gradient sample
                pick = baseline_points(g, dom, rec.cell_area, reps, rng, n=n_random)
                if pick.size:
                    yy, xx = np.unravel_index(pick, tuple(grid.shape))
                    lat2, lon2 = lat_all[yy, xx], lon_all[yy, xx]
                    # normal toward the cold side: down the gradient of tau
                    bne = -rec.fields["ux"][yy, xx].astype(float)
                    bnn = -rec.fields["uy"][yy, xx].astype(float)
                    bsig = signature_at(flow, lon2, lat2, bne, bnn)
                    bv = bsig["valid"]
                else:
                    bsig, bv = None, None
                for name in _SIGNS:
                    sh = _share(sig[name], wv)
                    base = (
                        float(np.mean(bsig[name][bv])) if bsig is not None and bv.any() else np.nan
                    )
                    row[f"{name}_share"] = sh
                    row[f"{name}_baseline"] = base
                    row[f"{name}_lift"] = lift(sh, base)
            rows.append(row)
    out = pd.DataFrame(rows, columns=REPORT_COLUMNS)
    out.attrs.update(
        grid_length_km=round(x_km, 1),
        smoothing_km=round(effective_smoothing_km(ds, s), 1),
        short_piece_km=round(short_km, 1),
        run=ds.attrs.get("run"),
    )
    return out


def pooled_summary(reports):
    """One line of figures pooled over reports (runs, members, levels, times).

    Shares are weighted by line length; lifts are recomputed from the pooled
    share and baseline.

    Parameters
    ----------
    reports : list of pandas.DataFrame
        From :func:`plausibility_report`.

    Returns
    -------
    dict
    """
    if not reports:
        raise InputError("pooled_summary: no reports; expected at least one")
    df = pd.concat(reports, ignore_index=True)
    w = df["line_km"].fillna(0.0).to_numpy(float)
    out = {"n_fronts": int(df["n_fronts"].sum()), "line_km": float(w.sum())}

    def wmean(col):
        v = df[col].to_numpy(float)
        ok = np.isfinite(v) & (w > 0)
        return float(np.sum(v[ok] * w[ok]) / np.sum(w[ok])) if ok.any() else float("nan")

    for col in ("tropical_share", "below_ground_share", "edge_share", "short_share"):
        out[col] = wmean(col)
    for name in _SIGNS:
        sh, base = wmean(f"{name}_share"), wmean(f"{name}_baseline")
        out[f"{name}_share"], out[f"{name}_baseline"] = sh, base
        out[f"{name}_lift"] = lift(sh, base)
    return out
