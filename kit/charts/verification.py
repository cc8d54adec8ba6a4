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


#: marker of each front kind in the verification plots (colour tells the run)
KIND_MARKERS = {"warm": "^", "cold": "o", "quasi-stationary": "s"}

#: run colours of the verification plots, in run order
_RUN_COLOURS = ("run_a", "run_b", "run_c", "run_d")


def _runs(*frames):
    """Run labels found in the pairs, oldest first (sorted labels)."""
    runs = set()
    for frame in frames:
        if "run" in frame:
            runs |= {str(r) for r in frame["run"].dropna() if str(r)}
    return sorted(runs)


def _header(title_run, frames):
    """(run line, event words) for the stamp: the runs verified, not the event folder."""
    runs = _runs(*frames)
    return (", ".join(runs) if runs else str(title_run)), f"event {title_run}"


def _scatter_by_run_and_kind(ax, frame, ycol, *, bias=False):
    """Colour = run, marker = front kind; with ``bias`` a dashed line at each run's mean."""
    hits = frame[frame["outcome"] == "hit"]
    for n, run in enumerate(_runs(frame)):
        colour = BRIEFING_COLOURS[_RUN_COLOURS[n % len(_RUN_COLOURS)]]
        sub_run = hits[hits["run"].astype(str) == run]
        for kind, marker in KIND_MARKERS.items():
            sub = sub_run[sub_run["front_kind"] == kind]
            if len(sub):
                ax.scatter(sub["lead_h"], sub[ycol], s=30, color=colour, marker=marker,
                           edgecolor=FRONT_COLOURS[kind], linewidth=0.9,
                           label=f"run {run}, {KIND_LABELS[kind]} (n={len(sub)})", zorder=3)
        if bias and len(sub_run):
            mean = float(np.nanmean(sub_run[ycol].astype(float)))
            ax.axhline(mean, color=colour, lw=1.2, ls="--", zorder=2,
                       label=f"run {run}: mean {mean:+.1f} h")


def _scatter_by_kind(ax, frame, ycol):
    for kind in ("warm", "cold", "quasi-stationary"):
        sub = frame[(frame["front_kind"] == kind) & (frame["outcome"] == "hit")]
        if len(sub):
            ax.scatter(sub["lead_h"], sub[ycol], s=22, color=FRONT_COLOURS[kind],
                       edgecolor="white", linewidth=0.5,
                       label=f"{KIND_LABELS[kind]} (n={len(sub)})", zorder=3)


def timing_error_figure(pairs, *, title_run, source):
    """Plot forecast minus observed passage time [h] against lead time [h], by run and kind.

    Colour tells the run, the marker (and its edge colour) the front kind; a
    dashed line at each run's mean error shows that run's bias.

    Parameters
    ----------
    pairs : pandas.DataFrame
        :func:`kit.science.verification.timing_pairs` output (one or many events).
    title_run : str
        Event label(s) for the header's product line (the header's run line
        lists the runs verified).
    source : str
        Data source line.

    Returns
    -------
    matplotlib.figure.Figure
    """
    fig, ax = new_figure(figsize=(9.0, 5.6), top_in=0.4)
    _scatter_by_run_and_kind(ax, pairs, "error_h", bias=True)
    ax.axhline(0.0, color=BRIEFING_COLOURS["muted"], lw=0.8)
    hits = pairs[pairs["outcome"] == "hit"]
    if len(hits):
        lim = max(3.0, float(np.nanmax(np.abs(hits["error_h"]))) * 1.35)
        ax.set_ylim(-lim, lim)
    ax.set_xlabel("lead time of the forecast passage [h]")
    ax.set_ylabel("timing error: forecast minus observed [h]\n(positive = forecast late)")
    n_miss = int((pairs["outcome"] == "miss").sum())
    n_fa = int((pairs["outcome"] == "false alarm").sum())
    ax.set_title(f"Front passage timing at sites: {len(hits)} hits, {n_miss} misses, "
                 f"{n_fa} false alarms", loc="left")
    ax.grid(alpha=0.3)
    if len(hits):
        ax.legend(loc="upper left", fontsize=7, ncol=2, framealpha=0.9)
    window = _window((pairs, "observed_utc"), (pairs, "forecast_utc"))
    run, event = _header(title_run, [pairs])
    stamp(fig, run=run, valid_time=window if window else pd.Timestamp.now("UTC"),
          lead_h=None, source=source,
          extra=f"Verification of {event}: passage timing errors (colour = run, marker = kind)")
    return fig


def position_error_figure(pairs, *, title_run, source):
    """Plot the modified Hausdorff distance [km] of forecast fronts against lead time [h].

    Colour tells the run, the marker the front kind.

    Parameters
    ----------
    pairs : pandas.DataFrame
        :func:`kit.science.verification.position_pairs` output.
    title_run, source : str
        Event label(s) for the product line and the data source line.

    Returns
    -------
    matplotlib.figure.Figure
    """
    fig, ax = new_figure(figsize=(9.0, 5.6), top_in=0.4)
    _scatter_by_run_and_kind(ax, pairs, "mhd_km")
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
        ax.legend(loc="upper left", fontsize=7, ncol=2, framealpha=0.9)
    window = _window((pairs, "valid_utc"))
    run, event = _header(title_run, [pairs])
    stamp(fig, run=run, valid_time=window if window else pd.Timestamp.now("UTC"),
          lead_h=None, source=source,
          extra=f"Verification of {event}: front position errors (colour = run, marker = kind)")
    return fig
