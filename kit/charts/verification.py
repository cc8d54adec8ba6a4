"""Verification figures: timing and position errors against lead time.

Built with :func:`kit.charts.style.new_figure` and stamped with the event,
the valid window, the source and :data:`kit.CAUTION`.
"""

import numpy as np
import pandas as pd

from kit.charts.style import BRIEFING_COLOURS, FRONT_COLOURS, KIND_LABELS, new_figure, stamp

__all__ = ["timing_error_figure", "position_error_figure"]


def _window(*frames):
    times = []
    for frame, col in frames:
        if len(frame):
            t = pd.to_datetime(frame[col].replace("", np.nan), utc=True).dropna()
            if len(t):
                times += [t.min(), t.max()]
    return (min(times), max(times)) if times else None


def _scatter_by_kind(ax, frame, ycol):
    for kind in ("warm", "cold", "quasi-stationary"):
        sub = frame[(frame["front_kind"] == kind) & (frame["outcome"] == "hit")]
        if len(sub):
            ax.scatter(sub["lead_h"], sub[ycol], s=22, color=FRONT_COLOURS[kind],
                       edgecolor="white", linewidth=0.5,
                       label=f"{KIND_LABELS[kind]} (n={len(sub)})", zorder=3)


def timing_error_figure(pairs, *, title_run, source):
    """Plot forecast minus observed passage time [h] against lead time [h], by front kind.

    Parameters
    ----------
    pairs : pandas.DataFrame
        :func:`kit.science.verification.timing_pairs` output (one or many events).
    title_run : str
        Run or event label for the header.
    source : str
        Data source line.

    Returns
    -------
    matplotlib.figure.Figure
    """
    fig, ax = new_figure(figsize=(9.0, 5.6))
    _scatter_by_kind(ax, pairs, "error_h")
    ax.axhline(0.0, color=BRIEFING_COLOURS["muted"], lw=0.8)
    hits = pairs[pairs["outcome"] == "hit"]
    if len(hits):
        lim = max(3.0, float(np.nanmax(np.abs(hits["error_h"]))) * 1.2)
        ax.set_ylim(-lim, lim)
    ax.set_xlabel("lead time of the forecast passage [h]")
    ax.set_ylabel("timing error: forecast minus observed [h]\n(positive = forecast late)")
    n_miss = int((pairs["outcome"] == "miss").sum())
    n_fa = int((pairs["outcome"] == "false alarm").sum())
    ax.set_title(f"Front passage timing at sites: {len(hits)} hits, {n_miss} misses, "
                 f"{n_fa} false alarms", loc="left")
    ax.grid(alpha=0.3)
    if len(hits):
        ax.legend(loc="upper left")
    window = _window((pairs, "observed_utc"), (pairs, "forecast_utc"))
    stamp(fig, run=title_run, valid_time=window if window else pd.Timestamp.now("UTC"),
          lead_h=None, source=source, extra="Verification: passage timing errors")
    return fig


def position_error_figure(pairs, *, title_run, source):
    """Plot the modified Hausdorff distance [km] of forecast fronts against lead time [h].

    Parameters
    ----------
    pairs : pandas.DataFrame
        :func:`kit.science.verification.position_pairs` output.
    title_run, source : str
        Header label and data source line.

    Returns
    -------
    matplotlib.figure.Figure
    """
    fig, ax = new_figure(figsize=(9.0, 5.6))
    _scatter_by_kind(ax, pairs, "mhd_km")
    ax.axhline(100.0, color=BRIEFING_COLOURS["muted"], lw=0.8, ls="--")
    ax.text(ax.get_xlim()[0], 100.0, " 100 km", va="bottom", fontsize=7,
            color=BRIEFING_COLOURS["muted"])
    ax.set_ylim(bottom=0)
    ax.set_xlabel("lead time [h]")
    ax.set_ylabel("position error: modified Hausdorff distance [km]")
    hits = pairs[pairs["outcome"] == "hit"]
    ax.set_title(f"Front line position against the verifying analyses: {len(hits)} matched "
                 "lines", loc="left")
    ax.grid(alpha=0.3)
    if len(hits):
        ax.legend(loc="upper left")
    window = _window((pairs, "valid_utc"))
    stamp(fig, run=title_run, valid_time=window if window else pd.Timestamp.now("UTC"),
          lead_h=None, source=source, extra="Verification: front position errors")
    return fig
