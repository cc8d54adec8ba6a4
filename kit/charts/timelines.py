"""Site timeline: the model's weather at one site through the run, with front passages.

Four panels share the time axis (UTC): 2-m temperature and dew point [C];
precipitation rate [mm h-1] as bars over the step each rate covers; 10-m wind
barbs [kt] with the speed written under each; and heights above the site
[ft]: 0 C level, wet-bulb 0 C level and the cloud-base proxy (lowest level with
relative humidity >= 95 %), with the freezing-rain / ice-pellet window shaded.
Every front passage of the arrival table is a vertical line in the front's
colour (solid for the run drawn, dashed for other runs or members), labelled
with the kind and time; where several runs or members disagree the band from
the earliest to the latest passage is shaded.

A thin run says so in the header (what it lacks, what was done instead); its
geostrophic stand-in for the 10-m wind is labelled as such, and without
humidity on its levels the wet-bulb 0 C level and the cloud base are left out
with a note rather than drawn from nothing.

Examples
--------
>>> import kit.charts.timelines as tl  # doctest: +SKIP
>>> fig = tl.timeline_figure(series, table[table.site == "Brackenholt"])  # doctest: +SKIP
"""

import matplotlib.dates as mdates
import matplotlib.ticker as mticker
import numpy as np
import pandas as pd

from kit.charts import require_graphics

require_graphics(("matplotlib",), "kit.charts.timelines")

from kit.charts.style import (  # noqa: E402
    BRIEFING_COLOURS,
    FONT,
    INK,
    KIND_LABELS,
    briefing_rc,
    front_colour,
    lead_hours,
    new_figure,
    stamp,
)
from kit.constants import FT_PER_M, KT_PER_MS, T0_K  # noqa: E402
from kit.errors import InputError  # noqa: E402
from kit.timefmt import day_hour  # noqa: E402

__all__ = ["timeline_figure", "TIMELINE_COLOURS"]

#: line colours of the timeline panels (the kit's own choice)
TIMELINE_COLOURS = {
    "temperature": "#b23a48",
    "dewpoint": "#2f7f6f",
    "precip": BRIEFING_COLOURS["precip"],
    "freezing_level": BRIEFING_COLOURS["freezing_level"],
    "wet_bulb_freezing_level": "#6a4c93",
    "cloud_base": "#607d8b",
    "fzra": "#f4a3b8",
    "spread": "#d9d9d9",
}


def _t(text):
    return pd.Timestamp(str(text).rstrip("Z")).to_datetime64()


def _no_passage_text(note, times):
    """Give a "no front passage <window>" note the window of the run's own valid times."""
    if not note.startswith("no front passage "):
        return note
    rest = note.split(";", 1)
    first, last = day_hour(times[0]), day_hour(times[-1])
    span = f"{first} to {last}" if first != last else f"(one valid time, {first})"
    text = f"no front passage {span}"
    return text + (f";{rest[1]}" if len(rest) > 1 else "")


def _valid_ticks(times, every_h=6):
    """Tick positions: valid times of the run only, every ``every_h`` h where the run has them."""
    stamps = pd.DatetimeIndex(times)
    picked = [t for t in stamps if t.hour % every_h == 0 and t.minute == 0]
    if len(picked) < 2:
        picked = list(stamps)
    if len(picked) > 12:
        picked = picked[:: int(np.ceil(len(picked) / 12))]
    return [mdates.date2num(t.to_pydatetime()) for t in picked]


def _panel_legend(ax, loc):
    """Draw the legend of one timeline panel in the briefing style (two columns, white box)."""
    return ax.legend(
        loc=loc,
        fontsize=FONT["small"],
        frameon=True,
        framealpha=0.95,
        facecolor="white",
        edgecolor="none",
        ncol=2,
    )


def _precip_types(ax, rows, series, times, y):
    """Write each spell's precipitation type (the table's ``precip_type``) at its start."""
    if rows is None or not len(rows) or "precip_type" not in rows:
        return
    run = series.attrs.get("run")
    done = set()
    for _, r in rows.iterrows():
        what, start = str(r.get("precip_type") or ""), str(r.get("precip_start_utc") or "")
        if not what or not start or (run and r.get("run") not in (None, "", run)):
            continue
        t = np.datetime64(start.rstrip("Z"), "ns")
        if (what, t) in done or t < times[0] or t > times[-1]:
            continue
        done.add((what, t))
        ax.text(mdates.date2num(t), y, what, fontsize=FONT["small"], ha="left", va="top",
                color=INK, gid="precip-type", zorder=8, clip_on=True,
                bbox={"facecolor": "white", "edgecolor": "none", "alpha": 0.85})


def timeline_figure(series, rows=None, *, title_extra=None):
    """Draw the timeline of one site.

    Parameters
    ----------
    series : xarray.Dataset
        :func:`kit.science.passages.site_series` of one run (one member selected).
    rows : pandas.DataFrame, optional
        Rows of :func:`kit.products.arrivals.arrival_table` for this site (any runs); rows
        of the drawn run are solid lines, others dashed.
    title_extra : str, optional
        Appended to the product line of the header.

    Returns
    -------
    matplotlib.figure.Figure
        Stamped with run, valid period, lead range, source and kit.CAUTION.
    """
    if "time" not in series.coords or series.sizes.get("time", 0) < 1:
        raise InputError("timeline: site series has no times; expected a run's time series")
    if "member" in series.dims:
        raise InputError(
            "timeline: site series has a member dimension; expected one member selected"
        )
    site = series.attrs.get("site", "site")
    run = series.attrs.get("run", "") or "unnamed run"
    times = series["time"].values.astype("datetime64[ns]")
    elev = float(series.attrs.get("elevation_m", 0.0))
    fig, axes = new_figure(
        4,
        1,
        figsize=(11.0, 8.6),
        sharex=True,
        hspace=0.12,
        left_in=0.85,
        right_in=0.85,  # room for the ft AMSL scale of the heights
        bottom_in=0.5,
    )
    ax_t, ax_p, ax_w, ax_h = axes[:, 0]
    # model step [datetime64]; a one-step run is drawn with a 3-h step
    step = np.median(np.diff(times)) if times.size > 1 else np.timedelta64(3, "h")

    def absent(ax, what):
        ax.set_yticks([])
        ax.text(
            0.5,
            0.5,
            f"{what} not in this run",
            transform=ax.transAxes,
            ha="center",
            va="center",
            fontsize=FONT["label"],
            color=BRIEFING_COLOURS["muted"],
        )

    with briefing_rc():
        # temperature and dew point
        if "t2m" in series:
            ax_t.plot(
                times,
                series["t2m"].values - T0_K,
                color=TIMELINE_COLOURS["temperature"],
                lw=1.8,
                label="temperature 2 m",
            )
        if "td2m" in series:
            ax_t.plot(
                times,
                series["td2m"].values - T0_K,
                color=TIMELINE_COLOURS["dewpoint"],
                lw=1.6,
                label="dew point 2 m",
            )
        ax_t.axhline(0.0, color=BRIEFING_COLOURS["muted"], lw=0.6, ls=":")
        ax_t.set_ylabel("2 m T, Td [C]")
        if "t2m" in series or "td2m" in series:
            _panel_legend(ax_t, "best")
        else:
            absent(ax_t, "2 m temperature and dew point")
        # precipitation bars over the step each rate covers
        if "precip" in series:
            width = np.diff(times) / np.timedelta64(1, "D")
            width = np.concatenate([[step / np.timedelta64(1, "D")], width])
            left = mdates.date2num(times) - width
            ax_p.bar(
                left,
                series["precip"].values,
                width=width,
                align="edge",
                color=TIMELINE_COLOURS["precip"],
                edgecolor="white",
                lw=0.5,
                label="precipitation (rate over the step)",
            )
            ax_p.legend(
                loc="upper left",
                fontsize=FONT["small"],
                frameon=True,
                framealpha=0.95,
                facecolor="white",
                edgecolor="none",
            )
            rates = np.asarray(series["precip"].values, dtype=float)
            peak = float(np.nanmax(rates)) if np.isfinite(rates).any() else 0.0
            ax_p.set_ylim(0, max(1.0, peak) * 1.3)
            _precip_types(ax_p, rows, series, times, max(1.0, peak) * 1.12)
        else:
            absent(ax_p, "precipitation")
        ax_p.set_ylabel("[mm/h]")
        # wind barbs at 10 m [kt]
        if "wind_u_ms" in series:
            u, v = series["wind_u_ms"].values, series["wind_v_ms"].values
            ax_w.barbs(
                mdates.date2num(times),
                np.full(times.size, 0.6),
                u * KT_PER_MS,
                v * KT_PER_MS,
                length=6.2,
                color=BRIEFING_COLOURS["wind"],
                lw=0.9,
                flip_barb=bool(series.attrs.get("lat", 0.0) < 0),
            )
            for tt, uu, vv in zip(times, u, v, strict=True):
                if not (np.isfinite(uu) and np.isfinite(vv)):
                    continue
                d = (270.0 - np.degrees(np.arctan2(vv, uu))) % 360.0
                ax_w.text(
                    mdates.date2num(tt),
                    0.12,
                    f"{d:03.0f}/{np.hypot(uu, vv) * KT_PER_MS:.0f}",
                    ha="center",
                    va="center",
                    fontsize=FONT["small"] - 0.5,
                    color=INK,
                )
        else:
            absent(ax_w, "wind")
        ax_w.set_ylim(0, 1.15)
        ax_w.set_yticks([])
        wind_from = series.attrs.get("wind_from", "")
        ax_w.set_ylabel("wind 10 m\n[deg/kt]" if not wind_from else "geostrophic\n[deg/kt]")
        if wind_from and "wind_u_ms" in series:
            ax_w.text(0.005, 0.98, f"{wind_from} (the run has no wind), not 10-m wind",
                      transform=ax_w.transAxes, ha="left", va="top", fontsize=FONT["small"],
                      color=INK, gid="wind-source",
                      bbox={"facecolor": "white", "edgecolor": "none", "alpha": 0.85})
        # heights above the site [ft]; without humidity aloft only the 0 C level
        humid = "td" in series
        for var, label in (
            ("freezing_level_m", "0 C level"),
            ("wet_bulb_freezing_level_m", "wet-bulb 0 C level"),
        )[: 2 if humid else 1]:
            key = var[:-2]
            ax_h.plot(
                times,
                (series[var].values - elev) * FT_PER_M,
                color=TIMELINE_COLOURS[key],
                lw=1.8 if key == "freezing_level" else 1.3,
                ls="-" if key == "freezing_level" else "--",
                marker="o" if times.size == 1 else None,
                label=label,
            )
        if humid:
            # the base is known only to the band between the column's points
            # (kit.science.passages): drawn as the band, never as a line finer than that
            low = series["cloud_base_low_m"].values * FT_PER_M
            high = series["cloud_base_high_m"].values * FT_PER_M
            ok = np.isfinite(low) & np.isfinite(high)
            ax_h.vlines(
                times[ok],
                low[ok],
                np.maximum(high[ok], low[ok] + 100.0),
                color=TIMELINE_COLOURS["cloud_base"],
                lw=4,
                alpha=0.8,
                label="cloud base lies in this band (RH >= 95 % between model levels)",
            )
        else:
            ax_h.text(
                0.995,
                0.95,
                "no humidity on the levels: no wet-bulb 0 C level, no cloud base",
                transform=ax_h.transAxes,
                ha="right",
                va="top",
                fontsize=FONT["small"],
                color=BRIEFING_COLOURS["muted"],
                gid="no-humidity",
                zorder=8,
                bbox={"facecolor": "white", "edgecolor": "none", "alpha": 0.9},
            )
        wl = np.isfinite(series["warm_layer_max_c"].values)
        first_span = True
        for k in np.nonzero(wl)[0]:
            lo = times[k] - step / 2
            hi = times[k] + step / 2
            ax_h.axvspan(
                lo,
                hi,
                color=TIMELINE_COLOURS["fzra"],
                alpha=0.55,
                lw=0,
                label="warm layer aloft over sub-zero ground air (FZRA/PL)" if first_span else None,
            )
            first_span = False
        ax_h.set_ylabel("[ft above site]")
        # the tables give the 0 C levels above mean sea level (as aviation reads them):
        # the same heights on a second scale, so both read the same number
        off_ft = elev * FT_PER_M
        amsl = ax_h.secondary_yaxis("right", functions=(lambda y: y + off_ft,
                                                         lambda y: y - off_ft))
        amsl.set_ylabel("[ft AMSL]")
        amsl.set_gid("ft-amsl-axis")
        top = np.nanmax(
            np.concatenate(
                [
                    (series["freezing_level_m"].values - elev) * FT_PER_M,
                    (series["wet_bulb_freezing_level_m"].values - elev) * FT_PER_M,
                    series["cloud_base_high_m"].values * FT_PER_M,
                    [1000.0],
                ]
            )
        )
        ax_h.set_ylim(0, top * 1.45)  # headroom for the legend
        _panel_legend(ax_h, "upper left")
        # passages
        labels = []
        if rows is not None and len(rows):
            for _, r in rows.iterrows():
                if not r.get("passage_utc"):
                    continue
                kind = r["front_kind"]
                colour = front_colour(kind)
                own = str(r.get("run", "")) == run
                tp = _t(r["passage_utc"])
                if (
                    own
                    and r.get("passage_earliest_utc")
                    and r.get("passage_latest_utc")
                    and r["passage_earliest_utc"] != r["passage_latest_utc"]
                ):
                    for ax in (ax_t, ax_p, ax_w, ax_h):
                        ax.axvspan(
                            _t(r["passage_earliest_utc"]),
                            _t(r["passage_latest_utc"]),
                            color=TIMELINE_COLOURS["spread"],
                            alpha=0.45,
                            lw=0,
                            zorder=0,
                        )
                for ax in (ax_t, ax_p, ax_w, ax_h):
                    ax.axvline(
                        tp,
                        color=colour,
                        lw=1.8 if own else 1.0,
                        ls="-" if own else "--",
                        alpha=1.0 if own else 0.8,
                        zorder=3,
                    )
                if own:
                    extra = " (extrap.)" if r.get("extrapolated") == "yes" else ""
                    labels.append(
                        (tp, f"{KIND_LABELS.get(kind, kind)} {day_hour(tp)}{extra}", colour)
                    )
        fig._frontshift["describe"] = [f"passages: {', '.join(t for _tp, t, _c in labels)}"
                                       if labels else "no passage marked"]
        if not labels and rows is not None:  # say why no passage is marked
            own_rows = rows[rows["run"].astype(str) == run] if "run" in rows else rows
            why = [
                str(r["note"])
                for _, r in own_rows.iterrows()
                if not r.get("passage_utc") and str(r.get("note", ""))
            ]
            ax_t.text(
                0.5,
                0.93,
                _no_passage_text(why[0], times) if why else "no front passage in this run",
                transform=ax_t.transAxes,
                ha="center",
                va="top",
                fontsize=FONT["label"],
                color=INK,
                bbox={"facecolor": "white", "edgecolor": "none", "alpha": 0.9},
            )
        for n, (tp, text, colour) in enumerate(sorted(labels, key=lambda x: x[0])):
            ax_t.annotate(
                text,
                xy=(tp, 1.0),
                xycoords=("data", "axes fraction"),
                xytext=(3, -10 - 11 * (n % 2)),
                textcoords="offset points",
                fontsize=FONT["small"],
                color=colour,
                fontweight="bold",
                ha="left",
                bbox={
                    "boxstyle": "square,pad=0.15",
                    "facecolor": "white",
                    "edgecolor": "none",
                    "alpha": 0.85,
                },
                zorder=6,
                annotation_clip=True,
            )
        for ax in (ax_t, ax_p, ax_h):  # legends above passage lines and shading
            if ax.get_legend() is not None:
                ax.get_legend().set_zorder(7)
        # every tick and the whole axis lie on the run's own valid times
        ax_h.xaxis.set_major_locator(mticker.FixedLocator(_valid_ticks(times)))
        ax_h.xaxis.set_major_formatter(mdates.DateFormatter("%d/%HZ"))
        if times.size == 1:
            ax_h.set_xlim(times[0] - step / 2, times[0] + step / 2)
        else:
            ax_h.set_xlim(times[0], times[-1])
        ax_h.set_xlabel("valid time [UTC]")
        for ax in (ax_t, ax_p, ax_h):
            ax.grid(True, color=BRIEFING_COLOURS["graticule"], lw=0.4, alpha=0.6)
        for ax in (ax_t, ax_p, ax_w):
            ax.tick_params(labelbottom=False)
    lat, lon = series.attrs.get("lat", np.nan), series.attrs.get("lon", np.nan)
    product = (
        f"Site timeline: {site} ({lat:.2f}, {lon:.2f}, {elev:.0f} m); "
        "passages solid = this run, dashed = other runs/members, grey = spread"
    )
    if series.attrs.get("elevation_assumed"):
        product += "; elevation not given, 0 m assumed"
    if title_extra:
        product += f"; {title_extra}"
    l0, l1 = lead_hours(series, times[0]), lead_hours(series, times[-1])
    stamp(
        fig,
        run=run,
        valid_time=(times[0], times[-1]),
        lead_h=None if l0 is None else (l0, l1),
        source=series.attrs.get("source", ""),
        extra=product,
        thin=series.attrs.get("thin"),
    )
    return fig
