"""Cross-section figure: the section a forecaster reads across a front.

Pressure on a log axis (1000 hPa at the bottom) with approximate heights in
feet and metres alongside; distance in km below and nautical miles above,
compass points at both ends; relative humidity shaded as a cloud proxy,
theta-w contours every 2 K, isotachs in knots with the jet core, the 0 C
isotherm and the wet-bulb 0 C line, the 2 PVU dynamic tropopause, the
frontal surface with its fitted slope, the site and the surface front; a
precipitation strip below with the rule-of-thumb rain zone. Every element
carries a ``gid`` (``rh``, ``theta-w``, ``isotachs``, ``jet-core``,
``isotherm-0c``, ``wet-bulb-0c``, ``pv2``, ``frontal-surface``,
``surface-front``, ``site``, ``rule-zone``, ``precip``) so products can be
checked by content. The section itself comes from :mod:`kit.science.sections`.

A section of a thin run without humidity has no relative humidity to shade and
no wet-bulb 0 C line: the figure says so where the humidity key would be,
contours theta (``gid`` ``theta``, every :data:`THETA_INTERVAL_K`, labelled in
K) instead of theta-w, names geostrophic winds as such, and carries the run's
thin line in its header.
"""

from kit.charts import require_graphics

require_graphics(("matplotlib",), "kit.charts.sections")

import matplotlib.colors as mcolors  # noqa: E402
import numpy as np  # noqa: E402
from matplotlib.lines import Line2D  # noqa: E402
from matplotlib.patches import Patch  # noqa: E402
from matplotlib.ticker import FixedLocator, MaxNLocator, NullLocator  # noqa: E402

from kit.charts.style import (  # noqa: E402
    BRIEFING_COLOURS,
    FONT,
    INK,
    KIND_LABELS,
    briefing_rc,
    new_figure,
    stamp,
)
from kit.constants import FT_PER_M, KT_PER_MS, NM_KM, T0_K  # noqa: E402
from kit.errors import InputError  # noqa: E402
from kit.science.sections import RULE_ZONES_NM, thermal_field  # noqa: E402

__all__ = ["section_figure", "draw_section", "RH_LEVELS", "RH_CMAP", "SECTION_COLOURS",
           "THETA_INTERVAL_K"]

#: relative humidity shading bounds [%]; below 70 % is left white
RH_LEVELS = [70.0, 80.0, 90.0, 95.0, 101.0]
#: calm sage-to-slate palette of our own for relative humidity (cloud proxy)
RH_CMAP = mcolors.ListedColormap(["#e6eee0", "#c7dcc0", "#9fc4b0", "#6f9fa0"], name="fs_rh")

#: contour interval of theta on a section without humidity [K]: theta spans about
#: twice the range of theta-w over the troposphere, so twice its 2 K (our choice)
THETA_INTERVAL_K = 4.0

#: line colours of the section figure (our own)
SECTION_COLOURS = {
    "theta_w": "#6b3e26",
    "isotach": "#4a4fa3",
    "jet": "#2d2f7a",
    "zero": BRIEFING_COLOURS["freezing_level"],
    "pv2": "#8a6a12",
    "front_none": INK,
    "site": BRIEFING_COLOURS["site"],
    "precip": BRIEFING_COLOURS["precip"],
    "zone_core": "#f3d9a4",
    "zone_fringe": "#faefd6",
}
_FRONT = {"warm": "#cf1d2c", "cold": "#1747c4", "quasi-stationary": "#7a3fa0"}
_P_TICKS = [1000, 925, 850, 700, 600, 500, 400, 300, 250, 200, 150, 100]
_H_TICKS_FT = [0, 5000, 10000, 15000, 20000, 25000, 30000, 35000, 40000, 45000, 50000]


def _surface_label(how):
    """Legend text of the surface front: the product's one definition, as the table gives it."""
    how = str(how or "")
    if how.startswith("centre of the 2 m"):
        return f"surface front ({how.replace('theta-w', 'θw').replace('theta', 'θ')})"
    return f"surface front ({how})" if how else "surface front"


def _kind_words(kind):
    """``warm front``, ``cold front``, ``quasi-stationary front`` or ``front``."""
    word = KIND_LABELS.get(kind, "front")
    return word if word.endswith("front") else f"{word} front"


def _need(sec, *names):
    missing = [n for n in names if n not in sec]
    if missing:
        raise InputError(f"section: field(s) {', '.join(missing)} missing; expected a section "
                         "from kit.science.sections (section_between / section_across_front)")


def _p_of_height(levels, zmean, z_m):
    """Pressure [hPa] at height ``z_m`` [m] from a mean profile (log-p linear in z)."""
    ok = np.isfinite(zmean)
    order = np.argsort(zmean[ok])
    return float(np.exp(np.interp(z_m, zmean[ok][order], np.log(levels[ok][order]),
                                  left=np.nan, right=np.nan)))


def draw_section(ax, strip, sec):
    """Draw a section on ``ax`` (pressure-distance) and its precipitation ``strip``.

    Parameters
    ----------
    ax : matplotlib.axes.Axes
        Main axes; gets a log pressure axis (1000 hPa at the bottom).
    strip : matplotlib.axes.Axes or None
        Axes below ``ax`` sharing its x axis, for precipitation and the rule
        zone; None leaves them out.
    sec : xarray.Dataset
        A section from :mod:`kit.science.sections`.

    Returns
    -------
    dict
        The main artists by name (the same names as their ``gid``).
    """
    field = thermal_field(sec)
    _need(sec, field, "wind_speed", "t", "pv_hemispheric", "z")
    dist = sec["distance"].values.astype(float)
    lev = sec["level"].values.astype(float)
    X, P = np.meshgrid(dist, lev)
    art = {}
    kind = str(sec.attrs.get("front_kind", "") or "")
    fcol = _FRONT.get(kind, SECTION_COLOURS["front_none"])

    if "rh" in sec:  # a run without humidity has none to shade
        rh = 100.0 * sec["rh"].transpose("level", "distance").values
        art["rh"] = ax.contourf(X, P, np.clip(rh, 0, 100.5), levels=RH_LEVELS, cmap=RH_CMAP,
                                extend="neither", zorder=1)
        art["rh"].set_gid("rh")

    tw = sec[field].transpose("level", "distance").values
    fin = tw[np.isfinite(tw)]
    step = 2.0 if field == "theta_w" else THETA_INTERVAL_K
    tw_levels = np.arange(np.floor(fin.min() / step) * step, np.ceil(fin.max() / step) * step
                          + step / 2, step)
    gid = "theta-w" if field == "theta_w" else "theta"
    art[gid] = ax.contour(X, P, tw, levels=tw_levels, colors=SECTION_COLOURS["theta_w"],
                          linewidths=0.7, zorder=3)
    art[gid].set_gid(gid)
    ax.clabel(art[gid], fmt=(lambda v: f"{v - T0_K:.0f}") if field == "theta_w" else
              (lambda v: f"{v:.0f}"), fontsize=FONT["small"] - 0.5, inline_spacing=2)

    ws = sec["wind_speed"].transpose("level", "distance").values * KT_PER_MS
    iso = [v for v in (40, 60, 80, 100, 120, 140, 160, 180) if np.nanmax(ws) >= v]
    if iso:
        art["isotachs"] = ax.contour(X, P, ws, levels=iso, colors=SECTION_COLOURS["isotach"],
                                     linewidths=0.8, linestyles=[(0, (4, 2))], zorder=4)
        art["isotachs"].set_gid("isotachs")
        ax.clabel(art["isotachs"], fmt="%d kt", fontsize=FONT["small"] - 0.5, inline_spacing=2)
    geo = sec.attrs.get("wind") == "geostrophic"
    if "jet_core_km" in sec.attrs:
        jk, jp = sec.attrs["jet_core_km"], sec.attrs["jet_core_hpa"]
        spd = sec.attrs["jet_core_speed_ms"] * KT_PER_MS
        is_jet = bool(sec.attrs.get("jet_core_is_jet", 0))
        (art["jet-core"],) = ax.plot([jk], [jp], marker="o", ms=11, mfc="white", clip_on=False,
                                     mec=SECTION_COLOURS["jet"], mew=1.5, ls="none", zorder=8,
                                     gid="jet-core", label="jet core" if is_jet else "wind max")
        ax.text(jk, jp, "J" if is_jet else "x", ha="center", va="center", zorder=9,
                fontsize=FONT["small"], fontweight="bold", color=SECTION_COLOURS["jet"])
        ax.annotate(f"{spd:.0f} kt" + (" geostrophic" if geo else ""), (jk, jp), xytext=(9, -14),
                    textcoords="offset points",
                    fontsize=FONT["small"], color=SECTION_COLOURS["jet"], zorder=9,
                    bbox=dict(boxstyle="round,pad=0.15", fc="white", ec="none", alpha=0.8))

    t = sec["t"].transpose("level", "distance").values
    if np.nanmin(t) < T0_K < np.nanmax(t):
        art["isotherm-0c"] = ax.contour(X, P, t, levels=[T0_K], colors=SECTION_COLOURS["zero"],
                                        linewidths=2.0, zorder=5)
        art["isotherm-0c"].set_gid("isotherm-0c")
    twb = sec["tw"].transpose("level", "distance").values if "tw" in sec else np.full(1, np.nan)
    if np.isfinite(twb).any() and np.nanmin(twb) < T0_K < np.nanmax(twb):
        art["wet-bulb-0c"] = ax.contour(X, P, twb, levels=[T0_K],
                                        colors=SECTION_COLOURS["zero"], linewidths=1.4,
                                        linestyles=[(0, (1.5, 1.5))], zorder=5)
        art["wet-bulb-0c"].set_gid("wet-bulb-0c")
    pv = sec["pv_hemispheric"].transpose("level", "distance").values
    if np.nanmin(pv) < 2.0 < np.nanmax(pv):
        art["pv2"] = ax.contour(X, P, pv, levels=[2.0], colors=SECTION_COLOURS["pv2"],
                                linewidths=2.2, zorder=5)
        art["pv2"].set_gid("pv2")

    if "frontal_surface_km" in sec:
        fs = sec["frontal_surface_km"].values
        ok = np.isfinite(fs)
        if ok.sum() >= 2:
            (art["frontal-surface"],) = ax.plot(fs[ok], lev[ok], color=fcol, lw=2.6, marker="o",
                                                ms=3.5, zorder=7, gid="frontal-surface",
                                                label="frontal surface")
            if kind == "quasi-stationary":  # WMO colours alternate red and blue
                art["frontal-surface"].set_color(_FRONT["cold"])
                ax.plot(fs[ok], lev[ok], color=_FRONT["warm"], lw=2.6, ls=(0, (6, 6)), zorder=7,
                        gid="frontal-surface-alt")
            n = sec.attrs.get("frontal_slope_1_in", np.nan)
            if np.isfinite(n):
                ktop = np.flatnonzero(ok)[-1]
                art["slope-label"] = ax.annotate(
                    f"slope 1:{n:.0f}", (fs[ktop], lev[ktop]), xytext=(6, -2),
                    textcoords="offset points", fontsize=FONT["label"], fontweight="bold",
                    color=fcol, zorder=9, gid="slope-label",
                    bbox=dict(boxstyle="round,pad=0.2", fc="white", ec=fcol, lw=0.8))

    outside = ~np.isfinite(t).any(axis=0)
    if outside.any():  # mark where the section leaves the model grid
        half = 0.5 * float(np.median(np.diff(dist)))
        edges = np.flatnonzero(np.diff(np.concatenate([[0], outside.astype(int), [0]])))
        for a0, b0 in zip(edges[::2], edges[1::2], strict=True):
            for a in [ax] + ([strip] if strip is not None else []):
                a.axvspan(dist[a0] - half, dist[b0 - 1] + half, facecolor="#f2f2f2",
                          edgecolor="#b0b0b0", hatch="///", lw=0, zorder=0.5, gid="outside-grid")
            ax.text(0.5 * (dist[a0] + dist[b0 - 1]), 0.5, "outside the model grid",
                    transform=ax.get_xaxis_transform(), ha="center", va="center",
                    fontsize=FONT["label"], color=BRIEFING_COLOURS["muted"], zorder=9,
                    bbox=dict(boxstyle="round,pad=0.2", fc="white", ec="none", alpha=0.9))

    gap = ~np.isfinite(t) & ~outside[None, :]
    if gap.any():  # missing inside the grid (levels below ground, masked data)
        ax.contourf(dist, lev, gap.astype(float), levels=[0.5, 1.5], colors="none",
                    hatches=["xx"], zorder=0.6)
        ax.contour(dist, lev, gap.astype(float), levels=[0.5], colors="#8c8c8c",
                   linewidths=0.6, zorder=0.6)
        art["no-data"] = True

    ax.set_yscale("log")
    pmax = float(lev.max())
    ptop = float(max(lev.min(), 100.0))
    ax.set_ylim(pmax, ptop)
    ax.yaxis.set_major_locator(FixedLocator([p for p in _P_TICKS if ptop <= p <= pmax]))
    ax.yaxis.set_minor_locator(NullLocator())
    ax.yaxis.set_major_formatter(lambda v, _pos: f"{v:.0f}")
    ax.set_ylabel("Pressure [hPa]")
    ax.set_xlim(dist[0], dist[-1])
    ax.grid(True, axis="y", color=BRIEFING_COLOURS["graticule"], lw=0.4, alpha=0.6, zorder=0)

    # approximate heights (ft and m) from the section's mean height profile
    zmean = np.nanmean(sec["z"].transpose("level", "distance").values, axis=1)
    hax = ax.twinx()
    hax.set_yscale("log")
    hax.set_ylim(ax.get_ylim())
    ticks, labels = [], []
    for ft in _H_TICKS_FT:
        p = _p_of_height(lev, zmean, ft / FT_PER_M)
        if np.isfinite(p) and ptop <= p <= pmax:
            ticks.append(p)
            labels.append(f"{ft:,.0f} ft\n{ft / FT_PER_M / 1000:.1f} km".replace(",", " "))
    hax.yaxis.set_major_locator(FixedLocator(ticks))
    hax.yaxis.set_minor_locator(NullLocator())
    hax.set_yticklabels(labels, fontsize=FONT["tick"] - 1, linespacing=0.9)
    hax.set_ylabel("Approx. height (section mean)", fontsize=FONT["small"])
    art["height-axis"] = hax

    nm = ax.secondary_xaxis("top", functions=(lambda k: k / NM_KM, lambda n: n * NM_KM))
    nm.set_xlabel("Distance [nm]", fontsize=FONT["small"])
    nm.tick_params(labelsize=FONT["tick"] - 0.5)
    art["nm-axis"] = nm

    for x, key, ha in ((0.005, "compass_start", "left"), (0.995, "compass_end", "right")):
        if sec.attrs.get(key):
            ax.text(x, 0.985, sec.attrs[key], transform=ax.transAxes, ha=ha, va="top",
                    fontsize=FONT["title"], fontweight="bold", color=INK, zorder=10,
                    gid=key.replace("_", "-"),
                    bbox=dict(boxstyle="round,pad=0.2", fc="white", ec="none", alpha=0.85))

    sfc = sec.attrs.get("surface_front_km", np.nan)
    site_km = sec.attrs.get("site_km")
    targets = [ax] + ([strip] if strip is not None else [])
    if site_km is not None and np.isfinite(site_km):
        name = sec.attrs.get("site_name", "") or "site"
        for a in targets:
            a.axvline(site_km, color=SECTION_COLOURS["site"], lw=0.9, ls=(0, (2, 3)), zorder=6,
                      gid="site-line")
        (art["site"],) = ax.plot([site_km], [pmax], marker="^", ms=11, clip_on=False,
                                 mfc=BRIEFING_COLOURS["site_face"], mec=INK, ls="none", zorder=10,
                                 gid="site", label=name)
        ax.annotate(name, (site_km, pmax), xytext=(0, 9), textcoords="offset points",
                    ha="center", fontsize=FONT["label"], fontweight="bold", zorder=10,
                    bbox=dict(boxstyle="round,pad=0.15", fc="white", ec="none", alpha=0.85))
    if np.isfinite(sfc):
        (art["surface-front"],) = ax.plot([sfc], [pmax], marker="D", ms=9, clip_on=False,
                                          color=fcol, mec="white", ls="none", zorder=10,
                                          gid="surface-front",
                                          label=_surface_label(sec.attrs.get(
                                              "surface_front_from", "")))
        word = _kind_words(kind)
        ax.annotate(f"surface {word}", (sfc, pmax), xytext=(0, 22), textcoords="offset points",
                    ha="center", fontsize=FONT["small"], color=fcol, fontweight="bold",
                    zorder=10, bbox=dict(boxstyle="round,pad=0.15", fc="white", ec="none",
                                         alpha=0.85))

    if strip is not None:
        zone = sec["rule_zone"].values if "rule_zone" in sec else np.zeros(dist.size)
        if (zone > 0).any():
            near_km = sec.attrs.get("rule_zone_near_km")
            far_km = sec.attrs.get("rule_zone_far_km")
            zkind = sec.attrs.get("rule_zone_kind", kind)
            if zkind == "warm":
                a, b = sorted((sfc, near_km))
                c, d = sorted((near_km, far_km))
                strip.axvspan(c, d, color=SECTION_COLOURS["zone_fringe"], zorder=0,
                              gid="rule-zone-fringe", lw=0)
                words = "rule of thumb: rain begins {lo:.0f}-{hi:.0f} nm ahead of the warm front"
            else:
                a, b = sorted((near_km, far_km))
                c, d = a, b
                words = "rule of thumb: main band {lo:.0f}-{hi:.0f} nm behind the cold front"
            art["rule-zone"] = strip.axvspan(a, b, color=SECTION_COLOURS["zone_core"], zorder=0,
                                             gid="rule-zone", lw=0)
            lo, hi = RULE_ZONES_NM[zkind]
            strip.text(0.5 * (min(a, c) + max(b, d)), 0.93, words.format(lo=lo, hi=hi),
                       transform=strip.get_xaxis_transform(), ha="center", va="top",
                       fontsize=FONT["small"] - 0.5, color=INK, clip_on=True, zorder=3,
                       bbox=dict(boxstyle="round,pad=0.1", fc="white", ec="none", alpha=0.7))
        if "precip" in sec:
            pr = sec["precip"].values
            art["precip"] = strip.fill_between(dist, 0, np.nan_to_num(pr), step="mid",
                                               color=SECTION_COLOURS["precip"], alpha=0.85,
                                               lw=0, zorder=2, gid="precip")
            top = max(1.0, float(np.nanmax(pr)) * 1.3) if np.isfinite(pr).any() else 1.0
            strip.set_ylim(0, top)
            strip.text(0.995, 0.93, "rate over the model step ending at the valid time",
                       transform=strip.transAxes, ha="right", va="top",
                       fontsize=FONT["small"] - 1.0, color=BRIEFING_COLOURS["muted"], zorder=3,
                       gid="precip-note")
        else:
            strip.set_ylim(0, 1)
            strip.text(0.99, 0.5, "no precipitation field in this run", ha="right",
                       va="center", transform=strip.transAxes, fontsize=FONT["small"],
                       color=BRIEFING_COLOURS["muted"])
        if np.isfinite(sfc):
            strip.axvline(sfc, color=fcol, lw=1.6, zorder=4, gid="surface-front-strip")
        strip.set_ylabel("Precip\n[mm h$^{-1}$]", fontsize=FONT["small"])
        strip.set_xlabel("Distance along the section [km]")
        strip.tick_params(labelsize=FONT["tick"] - 0.5)
        strip.yaxis.set_major_locator(MaxNLocator(nbins=2, min_n_ticks=2))
        ax.tick_params(labelbottom=False)
    else:
        ax.set_xlabel("Distance along the section [km]")
    return art


def _pv_words(sec):
    """Legend text of the dynamic tropopause line: +2 PVU north, -2 PVU south."""
    lat = np.asarray(sec["lat"].values, float)
    if (lat >= 0).all():
        return "2 PVU (dynamic tropopause)"
    if (lat < 0).all():
        return "-2 PVU (dynamic tropopause)"
    return "\u00b12 PVU (dynamic tropopause, sign of latitude)"


def _legend_handles(art, sec):
    thermal = ("theta-w [°C], every 2 K" if "theta-w" in art else
               f"theta [K], every {THETA_INTERVAL_K:g} K (no humidity: not theta-w)")
    h = [Line2D([], [], color=SECTION_COLOURS["theta_w"], lw=0.8, label=thermal)]
    if "isotachs" in art:
        geo = sec.attrs.get("wind") == "geostrophic"
        h.append(Line2D([], [], color=SECTION_COLOURS["isotach"], lw=0.9, ls=(0, (4, 2)),
                        label="geostrophic isotachs [kt]" if geo else "isotachs [kt]"))
    if "isotherm-0c" in art:
        h.append(Line2D([], [], color=SECTION_COLOURS["zero"], lw=2.0, label="0 °C isotherm"))
    if "wet-bulb-0c" in art:
        h.append(Line2D([], [], color=SECTION_COLOURS["zero"], lw=1.4, ls=(0, (1.5, 1.5)),
                        label="wet-bulb 0 °C"))
    if "pv2" in art:
        h.append(Line2D([], [], color=SECTION_COLOURS["pv2"], lw=2.2, label=_pv_words(sec)))
    if "frontal-surface" in art:
        h.append(Line2D([], [], color=art["frontal-surface"].get_color(), lw=2.6, marker="o",
                        ms=3.5, label="frontal surface"))
    if "rule-zone" in art:
        h.append(Patch(color=SECTION_COLOURS["zone_core"], label="rule-of-thumb rain zone"))
    if "no-data" in art:
        h.append(Patch(facecolor="white", edgecolor="#8c8c8c", hatch="xx",
                       label="no model data (below ground or masked)"))
    return h


def section_figure(sec, *, figsize=(11.0, 7.6)):
    """Build the briefing cross-section figure of a section.

    Parameters
    ----------
    sec : xarray.Dataset
        A section from :func:`kit.science.sections.section_across_front`,
        :func:`kit.science.sections.section_for_site` or
        :func:`kit.science.sections.section_between`.
    figsize : (float, float)
        Width, height [inches].

    Returns
    -------
    matplotlib.figure.Figure
        Stamped with run, valid time, lead time, source and :data:`kit.CAUTION`;
        save it with :func:`kit.products.files.save_figure`.
    """
    _need(sec, thermal_field(sec))
    fig, ax = new_figure(figsize=figsize, left_in=0.75, right_in=1.95, bottom_in=0.95,
                         top_in=0.45)
    with briefing_rc():
        pos = ax.get_position()
        strip_h = 0.13 * pos.height
        gap = 0.012
        ax.set_position([pos.x0, pos.y0 + strip_h + gap, pos.width, pos.height - strip_h - gap])
        strip = fig.add_axes([pos.x0, pos.y0, pos.width, strip_h], sharex=ax)
        art = draw_section(ax, strip, sec)
        cpos = ax.get_position()
        cax = fig.add_axes([cpos.x1 + 1.05 / figsize[0], cpos.y0 + 0.1 * cpos.height,
                            0.13 / figsize[0], 0.8 * cpos.height])
        if "rh" in art:
            cb = fig.colorbar(art["rh"], cax=cax, ticks=RH_LEVELS[:-1] + [100.0])
            cb.set_label("Relative humidity [%] (cloud proxy)", fontsize=FONT["small"])
            cb.ax.tick_params(labelsize=FONT["tick"] - 0.5)
            cb.ax.set_gid("rh-colourbar")
        else:  # say why there is no shading, where its key would be
            cax.axis("off")
            cax.text(0.5, 0.5, "No humidity on the levels:\nno relative humidity\n(cloud proxy) "
                     "shading,\nno wet-bulb 0 °C", transform=cax.transAxes, rotation=90,
                     ha="center", va="center", fontsize=FONT["small"],
                     color=BRIEFING_COLOURS["muted"], gid="no-humidity")
        fig.legend(handles=_legend_handles(art, sec), loc="lower center", ncol=4,
                   bbox_to_anchor=(0.5, 0.45 / figsize[1]), fontsize=FONT["small"],
                   frameon=False, columnspacing=1.4, handlelength=2.6)
    a = sec.attrs
    kind = a.get("front_kind", "")
    ends = f"{a.get('compass_start', '')} to {a.get('compass_end', '')}"
    what = f"Cross-section {ends}"
    if a.get("site_name"):
        what += f" through {a['site_name']}"
    if kind:
        what += f", across the {_kind_words(kind)}"
        if "front_level_hpa" in a:
            what += f" ({a['front_level_hpa']:.0f} hPa line)"
        how = str(a.get("surface_front_from", ""))
        if how:  # the one definition the arrival table and timelines use too
            how = how.replace("theta-w", "θw").replace("theta", "θ")
            what += f"; surface front: {how}"
    if "member" in a:
        what += f", member {a['member']}"
    if a.get("note"):
        what += f"; {a['note']}"
    stamp(fig, run=a.get("run") or "unnamed run", valid_time=a["valid_time"],
          lead_h=a.get("lead_h"), source=a.get("source") or "unnamed model run", extra=what,
          thin=a.get("thin"))
    fig._frontshift["artists_section"] = art
    return fig
