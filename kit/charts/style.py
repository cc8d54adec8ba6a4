"""The frontshift briefing style: figure frame, stamp, colours, fonts, map extents.

Every chart module builds its figure with :func:`new_figure` and finishes it with
:func:`stamp`, so all products share one look: a header band with the run,
valid time (UTC) and lead time, and a footer band with the data source and
:data:`kit.CAUTION`, which is always present.

The colours and the theta-w palette are the kit's own. Front colours follow
the WMO convention (cold blue, warm red, quasi-stationary alternating).

Examples
--------
>>> from kit.charts.style import new_figure, stamp
>>> fig, ax = new_figure()
>>> _ = ax.plot([0, 1], [0, 1])
>>> texts = stamp(fig, run="2031-02-03T00Z", valid_time="2031-02-03T12:00",
...               lead_h=12, source="demo run")
>>> "T+12 h" in texts["title"].get_text()
True
"""

import re
from pathlib import Path

from kit.charts import require_graphics

require_graphics(("matplotlib",), "kit.charts.style")

import matplotlib  # noqa: E402
import matplotlib.colors as mcolors  # noqa: E402
import matplotlib.patches  # noqa: E402, F401
import numpy as np  # noqa: E402
import pandas as pd  # noqa: E402
from matplotlib.backends.backend_agg import FigureCanvasAgg  # noqa: E402
from matplotlib.figure import Figure  # noqa: E402

from kit import CAUTION  # noqa: E402
from kit.errors import InputError  # noqa: E402

__all__ = [
    "INK",
    "FONT",
    "FRONT_COLOURS",
    "KIND_LABELS",
    "BRIEFING_COLOURS",
    "THETAW_CMAP",
    "LEAD_CMAP",
    "briefing_rc",
    "new_figure",
    "stamp",
    "stamp_texts",
    "thin_line",
    "format_utc",
    "format_lead",
    "lead_hours",
    "source_text",
    "front_colour",
    "thetaw_levels",
    "map_extent",
    "pad_extent",
    "map_projection",
]

#: main text colour (a dark slate, softer than black on projectors)
INK = "#1e2a33"

#: font sizes [pt] and family of the briefing style
FONT = {
    "family": "DejaVu Sans",
    "title": 11.0,
    "subtitle": 9.0,
    "label": 8.5,
    "tick": 7.5,
    "small": 7.0,
    "footer": 6.8,
}

#: line colours by front kind (WMO convention: cold blue, warm red; the
#: quasi-stationary symbol alternates the two)
FRONT_COLOURS = {
    "cold": "#1747c4",
    "warm": "#cf1d2c",
    "quasi-stationary": "#7a3fa0",  # for legends and tables; maps alternate red/blue
}

#: forecaster-facing names of the front kinds
KIND_LABELS = {"cold": "cold front", "warm": "warm front", "quasi-stationary": "quasi-stationary"}

#: the kit's named colours for everything else on a briefing figure
BRIEFING_COLOURS = {
    "ink": INK,
    "muted": "#5d6b75",
    "caution": "#8a3b00",
    "header_band": "#e9eef1",
    "isobar": "#2b2b2b",
    "coast": "#4a4a4a",
    "border": "#8c8c8c",
    "graticule": "#9aa6ad",
    "site": "#111111",
    "site_face": "#ffd23f",
    "freezing_level": "#00838f",
    "wind": "#37474f",
    "precip": "#2e7d32",
    "cloud": "#90a4ae",
    "run_a": "#1b6ca8",
    "run_b": "#e07b00",
    "run_c": "#5c8d2f",
    "run_d": "#8e3b8c",
    "analysis": "#222222",
}

# theta-w palette of our own: cold air in deep slate and teal, a pale neutral
# band near the middle, warm air through sand to terracotta and plum.
_THETAW_STOPS = [
    (0.00, "#2b2d6e"),
    (0.15, "#3d5fa8"),
    (0.30, "#4f9bb8"),
    (0.42, "#8fcfbf"),
    (0.50, "#eef0d8"),
    (0.60, "#f2cf86"),
    (0.72, "#e69a55"),
    (0.86, "#c45a3c"),
    (1.00, "#7d2d4f"),
]
#: continuous theta-w colour map of the kit (register name ``frontshift_thetaw``)
THETAW_CMAP = mcolors.LinearSegmentedColormap.from_list("frontshift_thetaw", _THETAW_STOPS)

#: lead-time colour map for fronts-through-time overviews (early = light, late = dark)
LEAD_CMAP = mcolors.LinearSegmentedColormap.from_list(
    "frontshift_lead", ["#9fd6c2", "#3f9fa6", "#2f5f9e", "#3b2b6e", "#1a1030"]
)


def briefing_rc():
    """Matplotlib rc settings of the briefing style, as a context manager.

    Returns
    -------
    contextlib.AbstractContextManager
        ``with briefing_rc(): ...`` applies the fonts and colours temporarily.
    """
    return matplotlib.rc_context(
        {
            "font.family": "sans-serif",
            "font.sans-serif": [FONT["family"], "Arial", "Liberation Sans"],
            "font.size": FONT["label"],
            "axes.titlesize": FONT["subtitle"],
            "axes.labelsize": FONT["label"],
            "axes.edgecolor": BRIEFING_COLOURS["muted"],
            "axes.labelcolor": INK,
            "xtick.color": INK,
            "ytick.color": INK,
            "xtick.labelsize": FONT["tick"],
            "ytick.labelsize": FONT["tick"],
            "text.color": INK,
            "legend.fontsize": FONT["small"],
            "legend.frameon": True,
            "legend.framealpha": 0.9,
            "figure.facecolor": "white",
            "savefig.facecolor": "white",
        }
    )


#: header and footer bands [inches]
HEADER_IN = 0.62
FOOTER_IN = 0.42


def new_figure(nrows=1, ncols=1, *, projection=None, figsize=(10.0, 7.0), bottom_in=0.45,
               left_in=0.6, right_in=0.25, top_in=0.1, hspace=0.25, wspace=0.15,
               sharex=False, sharey=False):
    """Make a figure with the briefing frame: header band, axes grid, footer band.

    The figure is a plain :class:`matplotlib.figure.Figure` (no pyplot state), so
    building charts in a loop never leaks memory and works headless.

    Parameters
    ----------
    nrows, ncols : int
        Axes grid.
    projection : cartopy.crs.Projection, optional
        Map projection of every axes (cartopy GeoAxes); None for plain axes.
    figsize : (float, float)
        Width, height [inches].
    bottom_in, left_in, right_in, top_in : float
        Extra room around the axes grid [inches] (tick labels, colour bar),
        inside the header and footer bands.
    hspace, wspace : float
        Space between axes (fraction of the mean axes size).
    sharex, sharey : bool
        Share axes (plain axes only).

    Returns
    -------
    fig : matplotlib.figure.Figure
    axes : Axes or ndarray of Axes
        A single axes for a 1x1 grid, otherwise an array of shape (nrows, ncols).
    """
    if nrows < 1 or ncols < 1:
        raise InputError(f"new_figure: nrows={nrows}, ncols={ncols}; expected at least 1 each")
    width, height = float(figsize[0]), float(figsize[1])
    if width <= 0 or height <= 0:
        raise InputError(f"new_figure: figsize={figsize}; expected positive width and height")
    with briefing_rc():
        fig = Figure(figsize=(width, height), dpi=110)
        FigureCanvasAgg(fig)  # headless canvas: fig.canvas.draw() and savefig work anywhere
        top = 1.0 - (HEADER_IN + top_in) / height
        bottom = (FOOTER_IN + bottom_in) / height
        if top <= bottom:
            raise InputError(
                f"new_figure: figsize={figsize} leaves no room between header and footer; "
                "expected a taller figure"
            )
        gs = fig.add_gridspec(
            nrows, ncols, left=left_in / width, right=1.0 - right_in / width,
            bottom=bottom, top=top, hspace=hspace, wspace=wspace,
        )
        axes = np.empty((nrows, ncols), dtype=object)
        for i in range(nrows):
            for j in range(ncols):
                kw = {}
                if projection is not None:
                    kw["projection"] = projection
                else:
                    if sharex and (i or j):
                        kw["sharex"] = axes[0, 0]
                    if sharey and (i or j):
                        kw["sharey"] = axes[0, 0]
                axes[i, j] = fig.add_subplot(gs[i, j], **kw)
    fig._frontshift = {"stamped": False}
    if nrows == 1 and ncols == 1:
        return fig, axes[0, 0]
    return fig, axes


def utc_timestamp(value, what="valid_time"):
    """Any time-like value as a UTC pandas Timestamp (naive input is taken as UTC)."""
    if value is None:
        return None
    try:
        ts = pd.Timestamp(np.asarray(value).item() if isinstance(value, np.ndarray) else value)
    except (TypeError, ValueError):
        raise InputError(
            f"{what}={value!r}: not a time; expected an ISO 8601 time such as 2031-02-03T12:00Z"
        ) from None
    if ts is pd.NaT:
        raise InputError(f"{what}: missing (NaT); expected a valid time")
    if ts.tzinfo is None:
        ts = ts.tz_localize("UTC")
    return ts.tz_convert("UTC")


def format_utc(value, *, weekday=True):
    """Format a time the way the briefing reads it, e.g. ``Mon 03 Feb 2031 12:00 UTC``.

    Parameters
    ----------
    value : datetime-like
        numpy.datetime64, pandas.Timestamp, datetime or ISO string (naive = UTC).
    weekday : bool
        Lead with the abbreviated day name.

    Returns
    -------
    str
    """
    ts = utc_timestamp(value)
    return ts.strftime(("%a " if weekday else "") + "%d %b %Y %H:%M UTC")


def format_lead(lead_h):
    """Lead time as ``T+12 h`` (``T+0 h`` at the analysis; ``T-3 h`` before it).

    Parameters
    ----------
    lead_h : float or (float, float) or None
        Lead time [h], or a range for a through-time chart.

    Returns
    -------
    str
        Empty when ``lead_h`` is None.
    """
    if lead_h is None:
        return ""
    if isinstance(lead_h, (tuple, list)) and len(lead_h) == 2:
        if float(lead_h[0]) == float(lead_h[1]):  # one valid time: one lead time
            return format_lead(lead_h[0])
        return f"{format_lead(lead_h[0])} to {format_lead(lead_h[1]).replace('T', '', 1)}"
    value = float(lead_h)
    if not np.isfinite(value):
        raise InputError(f"lead_h={lead_h!r}: not finite; expected hours since the run start")
    text = f"{value:+.0f}" if value == round(value) else f"{value:+.1f}"
    return f"T{text} h"


def lead_hours(ds, valid_time):
    """Lead time of ``valid_time`` in the run ``ds`` [h] (None without a reference time).

    Parameters
    ----------
    ds : xarray.Dataset
        Canonical run with scalar coordinate ``reference_time``.
    valid_time : datetime-like
    """
    if "reference_time" not in ds.coords:
        return None
    ref = utc_timestamp(ds["reference_time"].values, "reference_time")
    return (utc_timestamp(valid_time) - ref) / pd.Timedelta(hours=1)


def source_text(ds_or_text, *, limit=90):
    """Return a short data-source line from a Dataset's ``source`` attribute (or a string).

    Long lists of step files are shortened to ``first ... last (N files)``.

    Parameters
    ----------
    ds_or_text : xarray.Dataset or str
    limit : int
        Longest text kept as is [characters].

    Returns
    -------
    str
    """
    text = ds_or_text if isinstance(ds_or_text, str) else str(
        getattr(ds_or_text, "attrs", {}).get("source", "") or "unnamed model run"
    )
    text = " ".join(text.split())
    if len(text) <= limit:
        return text
    parts = [p for p in text.replace(";", ",").replace(" ", ",").split(",") if p]
    if len(parts) > 2:
        first, last = Path(parts[0]), Path(parts[-1])
        folder = first.parent.name
        short = f"{folder + '/' if folder else ''}{first.name} ... {last.name} ({len(parts)} files)"
        if len(short) <= limit:
            return short
    return text[: limit - 3] + "..."


def _valid_text(valid_time):
    if isinstance(valid_time, (tuple, list)) and len(valid_time) == 2:
        return f"Valid {format_utc(valid_time[0])} to {format_utc(valid_time[1])}"
    return f"Valid {format_utc(valid_time)}"


def thin_line(thin):
    """Short header line for a thin run, from the loader's ``ds.attrs["thin"]`` text.

    The loader writes one "; "-joined item per thing the run lacks, each as
    ``what is missing: what was done instead``. The line keeps every item and
    drops only the words "on pressure levels" and remarks in brackets, so it
    fits one line of a figure.

    Parameters
    ----------
    thin : str or None
        ``ds.attrs["thin"]`` (empty or None for a full run).

    Returns
    -------
    str
        ``"Thin run: ..."``; empty for a full run.

    Examples
    --------
    >>> thin_line("no humidity on pressure levels: fronts found in theta, not theta-w")
    'Thin run: no humidity: fronts found in theta, not theta-w'
    """
    text = str(thin or "").strip()
    if not text:
        return ""
    items = []
    for item in text.split("; "):
        item = re.sub(r"\s*\([^)]*\)", "", item).replace(" on pressure levels", "")
        items.append(" ".join(item.split()))
    return "Thin run: " + "; ".join(i for i in items if i)


def _fit_width(fig, text, share, smallest=5.0):
    """Shrink ``text`` (down to ``smallest`` pt) until it spans at most ``share`` of ``fig``."""
    get_renderer = getattr(fig.canvas, "get_renderer", None)
    if get_renderer is None:  # a canvas that cannot measure text: keep the size
        return
    renderer = get_renderer()
    room = share * fig.bbox.width
    width = text.get_window_extent(renderer).width
    if width > room:
        text.set_fontsize(max(smallest, text.get_fontsize() * room / width))


def stamp(fig, *, run, valid_time, lead_h, source, extra=None, thin=None):
    """Put the header (run, valid time, lead time) and footer (source, caution) on ``fig``.

    Calling it again replaces the earlier stamp. The caution line is always
    written; a figure is a product only once stamped. A thin run (``thin``,
    the loader's ``ds.attrs["thin"]``) gets one more line at the top of the
    header saying what the run lacks and what was done instead
    (:func:`thin_line`).

    Parameters
    ----------
    fig : matplotlib.figure.Figure
    run : str
        Run label (``ds.attrs["run"]``), e.g. ``2031-02-03T00Z``.
    valid_time : datetime-like or (datetime-like, datetime-like)
        Valid time (UTC), or the first and last valid times of a through-time chart.
    lead_h : float or (float, float) or None
        Lead time [h], or a range; None leaves it out (e.g. analyses).
    source : str or xarray.Dataset
        Data source (a Dataset's ``source`` attribute is shortened).
    extra : str, optional
        Product name shown as the second header line (e.g. ``Fronts at 850 hPa``).
    thin : str, optional
        ``ds.attrs["thin"]`` of the run drawn; empty or None for a full run.

    Returns
    -------
    dict
        The text artists: ``title``, ``subtitle`` (may be None), ``source``, ``caution``
        and, on a thin run, ``thin``.
    """
    if not run:
        raise InputError("stamp: run label is empty; expected the run label, e.g. 2031-02-03T00Z")
    state = getattr(fig, "_frontshift", None)
    if state is None:
        state = fig._frontshift = {}
    for artist in state.get("artists", {}).values():
        if artist is not None:
            artist.remove()
    width, height = fig.get_size_inches()
    band = HEADER_IN / height
    parts = [f"Run {run}", _valid_text(valid_time)]
    lead = format_lead(lead_h)
    if lead:
        parts.append(lead)
    title_text = "   |   ".join(parts)
    src = source_text(source)
    with briefing_rc():
        header = matplotlib.patches.Rectangle(
            (0, 1 - band), 1, band, transform=fig.transFigure, facecolor=BRIEFING_COLOURS[
                "header_band"], edgecolor="none", zorder=-10,
        )
        fig.add_artist(header)
        title = fig.text(
            0.012, 1 - 0.30 / height, title_text, ha="left", va="center",
            fontsize=FONT["title"], fontweight="bold", color=INK, gid="frontshift-title",
        )
        _fit_width(fig, title, 0.976, smallest=7.0)  # a long run list never runs off the page
        subtitle = None
        if extra:
            subtitle = fig.text(
                0.012, 1 - 0.50 / height, str(extra), ha="left", va="center",
                fontsize=FONT["subtitle"], color=BRIEFING_COLOURS["muted"],
                gid="frontshift-subtitle",
            )
        thin_artist = None
        if thin_line(thin):
            thin_artist = fig.text(
                0.012, 1 - 0.10 / height, thin_line(thin), ha="left", va="center",
                fontsize=FONT["footer"], color=BRIEFING_COLOURS["caution"], fontweight="bold",
                gid="frontshift-thin",
            )
            _fit_width(fig, thin_artist, 0.976)
        source_artist = fig.text(
            0.012, 0.27 / height, f"Source: {src}", ha="left", va="center",
            fontsize=FONT["footer"], color=BRIEFING_COLOURS["muted"], gid="frontshift-source",
        )
        caution = fig.text(
            0.012, 0.11 / height, CAUTION, ha="left", va="center", fontsize=FONT["footer"],
            color=BRIEFING_COLOURS["caution"], fontweight="bold", gid="frontshift-caution",
        )
        brand = fig.text(
            0.988, 0.11 / height, "frontshift", ha="right", va="center",
            fontsize=FONT["footer"], color=BRIEFING_COLOURS["muted"], style="italic",
            gid="frontshift-brand",
        )
    artists = {"title": title, "subtitle": subtitle, "source": source_artist,
               "caution": caution, "brand": brand, "header": header}
    if thin_artist is not None:
        artists["thin"] = thin_artist
    state.update(stamped=True, artists=artists, run=run, valid_time=valid_time,
                 lead_h=lead_h, source=src)
    # what a saved file says of itself (PNG text chunks, PDF info):
    # kit.products.files.figure_metadata
    state["metadata"] = {"Title": title_text, "Description": str(extra or ""),
                         "Source": f"Source: {src}", "Disclaimer": CAUTION,
                         "Software": "frontshift"}
    if thin_line(thin):
        state["metadata"]["Comment"] = thin_line(thin)
    keys = ("title", "subtitle", "source", "caution") + (("thin",) if thin_artist else ())
    return {k: artists[k] for k in keys}


def stamp_texts(fig):
    """All text on ``fig`` (figure texts and every axes' texts and titles), for checks.

    Returns
    -------
    list of str
    """
    out = [t.get_text() for t in fig.texts]
    for ax in fig.axes:
        out.extend(t.get_text() for t in ax.texts)
        out.extend([ax.get_title(), ax.get_title("left"), ax.get_title("right"),
                    ax.get_xlabel(), ax.get_ylabel()])
    return [t for t in out if t]


def front_colour(kind):
    """Colour of a front kind (``cold``, ``warm``, ``quasi-stationary``).

    Raises
    ------
    kit.errors.InputError
        For any other kind.
    """
    try:
        return FRONT_COLOURS[kind]
    except KeyError:
        raise InputError(
            f"front kind {kind!r}: unknown; expected one of {', '.join(FRONT_COLOURS)}"
        ) from None


def thetaw_levels(values, step=1.0):
    """Shading levels for theta-w covering ``values`` [K] at ``step`` [K].

    Parameters
    ----------
    values : array_like
        Theta-w field [K] (NaN ignored).
    step : float
        Interval [K].

    Returns
    -------
    ndarray
        Level boundaries [K], at least two.
    """
    arr = np.asarray(values, dtype=float)
    finite = arr[np.isfinite(arr)]
    if finite.size == 0:
        raise InputError("theta-w field: no finite values; expected a field with data")
    lo = np.floor(finite.min() / step) * step
    hi = np.ceil(finite.max() / step) * step
    if hi <= lo:
        hi = lo + step
    n = int(round((hi - lo) / step))
    if n > 60:  # keep the key readable
        step = step * np.ceil(n / 40)
        lo = np.floor(finite.min() / step) * step
        hi = np.ceil(finite.max() / step) * step
    return np.arange(lo, hi + step / 2, step)


def map_extent(ds):
    """Longitude/latitude extent of a canonical run [degrees]: (west, east, south, north).

    Longitudes follow the grid, so a domain across the dateline gives
    ``east > 180`` (or ``west < -180``) and stays contiguous.

    Parameters
    ----------
    ds : xarray.Dataset
        Canonical run (regular or projected grid).
    """
    if "lat" not in ds.coords or "lon" not in ds.coords:
        raise InputError("dataset: no lat/lon coordinates; expected a canonical run (kit.open_run)")
    lat = np.asarray(ds["lat"].values, dtype=float)
    lon = np.asarray(ds["lon"].values, dtype=float)
    if lon.ndim == 1 and lon.size > 1:
        # contiguous longitudes: unwrap steps larger than half the globe
        lon = np.rad2deg(np.unwrap(np.deg2rad(lon)))
    elif lon.ndim == 2:
        lon = np.rad2deg(np.unwrap(np.deg2rad(lon), axis=1))
    return (float(np.nanmin(lon)), float(np.nanmax(lon)),
            float(np.nanmin(lat)), float(np.nanmax(lat)))


def pad_extent(extent, frac=0.0):
    """Grow (positive ``frac``) or shrink (negative) an extent by a fraction of its size."""
    w, e, s, n = extent
    dx, dy = (e - w) * frac, (n - s) * frac
    return (w - dx, e + dx, max(s - dy, -90.0), min(n + dy, 90.0))


def map_projection(ds_or_extent):
    """Choose a map projection fitting the run's domain (both hemispheres, dateline, tropics).

    Mid- and high-latitude domains get a Lambert conformal projection with
    standard parallels inside the domain (southern domains use southern
    parallels); domains touching a pole a polar stereographic one; tropical or
    near-global domains an equirectangular one. The central longitude is the
    domain's middle, so a domain across the dateline is not split.

    Parameters
    ----------
    ds_or_extent : xarray.Dataset or (west, east, south, north)
        A canonical run or an extent [degrees].

    Returns
    -------
    cartopy.crs.Projection
    """
    require_graphics(("cartopy",), "map_projection")
    import cartopy.crs as ccrs  # optional heavy dependency, loaded on use

    if isinstance(ds_or_extent, (tuple, list)):
        w, e, s, n = (float(v) for v in ds_or_extent)
    else:
        w, e, s, n = map_extent(ds_or_extent)
    lon0 = ((w + e) / 2.0 + 180.0) % 360.0 - 180.0
    span = e - w
    if n > 84.0 and s > 20.0:
        return ccrs.NorthPolarStereo(central_longitude=lon0)
    if s < -84.0 and n < -20.0:
        return ccrs.SouthPolarStereo(central_longitude=lon0)
    tropical = max(abs(s), abs(n)) < 22.0 or (s < 0.0 < n and max(abs(s), abs(n)) < 40.0)
    if span > 200.0 or tropical:
        return ccrs.PlateCarree(central_longitude=lon0)
    if s < 0.0 < n:
        return ccrs.PlateCarree(central_longitude=lon0)
    lat_mid = (s + n) / 2.0
    # standard parallels at one sixth inside the domain's edges (same sign as the domain)
    p1, p2 = s + (n - s) / 6.0, n - (n - s) / 6.0
    # cut the cone well outside the domain, on the equator side
    cutoff = max(s - 20.0, -80.0) if n > 0 else min(n + 20.0, 80.0)
    return ccrs.LambertConformal(
        central_longitude=lon0, central_latitude=lat_mid, standard_parallels=(p1, p2),
        cutoff=cutoff,
    )
