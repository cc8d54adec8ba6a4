"""Frontal maps in the briefing style.

- :func:`front_map`: one valid time: theta-w (or theta) shading on the front
  level, MSLP isobars every 4 hPa with labels, fronts with the WMO symbols,
  sites, offline coastlines and a labelled graticule.
- :func:`fronts_through_time`: small multiples of the run's fronts at chosen
  valid times, with one shared colour key.
- :func:`fronts_overview`: every front line of the run on one map, coloured by
  lead time, so the movement of each front reads at a glance.

Each figure is stamped with run, valid time, lead time, source and
:data:`kit.CAUTION` (:func:`kit.charts.style.stamp`).

WMO front symbols come from MetPy's path effects: cold fronts blue with
triangles toward the warm air, warm fronts red with semicircles toward the cold
air, quasi-stationary fronts alternating (triangles toward the warm air,
semicircles toward the cold air). The symbols sit on the side the front moves
toward; the side is taken from each front's cold-side normal.
"""

from kit.charts import require_graphics

require_graphics(("matplotlib", "cartopy", "metpy"), "kit.charts.maps")

import io  # noqa: E402

import cartopy.crs as ccrs  # noqa: E402
import matplotlib.colors as mcolors  # noqa: E402
import matplotlib.patheffects as mpe  # noqa: E402
import matplotlib.ticker as mticker  # noqa: E402
import numpy as np  # noqa: E402
import pandas as pd  # noqa: E402
from matplotlib.backends.backend_agg import FigureCanvasAgg  # noqa: E402
from matplotlib.cm import ScalarMappable  # noqa: E402
from matplotlib.lines import Line2D  # noqa: E402
from metpy.plots import ColdFront, StationaryFront, WarmFront  # noqa: E402
from PIL import Image  # noqa: E402

from kit.charts import style  # noqa: E402
from kit.charts.coast import add_coastlines  # noqa: E402
from kit.constants import T0_K  # noqa: E402
from kit.errors import InputError  # noqa: E402
from kit.model import people_speed  # noqa: E402
from kit.science import thermo  # noqa: E402
from kit.science.domain import below_ground  # noqa: E402
from kit.timefmt import iso_minutes  # noqa: E402

__all__ = [
    "FIELDS",
    "select_time",
    "level_field_c",
    "map_axes",
    "draw_shading",
    "draw_isobars",
    "draw_fronts",
    "draw_sites",
    "add_graticule",
    "front_legend",
    "front_map",
    "fronts_through_time",
    "fronts_overview",
    "symbol_side",
    "MapSeries",
]

#: fields a map can shade: key -> (label, kit.science.thermo name)
FIELDS = {
    "theta_w": ("\u03b8w", "theta_w"),
    "theta": ("\u03b8", "theta"),
}

#: background outside the model domain
NO_DATA = "#e4e4e4"
#: sea colour on maps without shading
SEA = "#f3f7f9"

_HALO = [mpe.withStroke(linewidth=2.4, foreground="white")]


def _pc():
    return ccrs.PlateCarree()


def _times(ds):
    if "time" not in ds.coords:
        raise InputError("dataset: no 'time' coordinate; expected a canonical run (kit.open_run)")
    return np.atleast_1d(ds["time"].values).astype("datetime64[ns]")


def select_time(ds, time, *, member=None):
    """Pick one valid time (and member) of a run.

    Parameters
    ----------
    ds : xarray.Dataset
        Canonical run.
    time : datetime-like
        Valid time (UTC); must be one of the run's times (within one minute).
    member : int, optional
        Ensemble member; the first member when the run has several and None.

    Returns
    -------
    ds_t : xarray.Dataset
        The run at that time (no ``time`` or ``member`` dimension).
    valid : numpy.datetime64
        The valid time found [ns].
    """
    times = _times(ds)
    want = style.utc_timestamp(time, "time").tz_convert(None).to_datetime64()
    diff = np.abs(times - want)
    i = int(np.argmin(diff))
    if diff[i] > np.timedelta64(60, "s"):
        raise InputError(
            f"time {iso_minutes(want)}: not a valid time of run "
            f"{ds.attrs.get('run', '?')}; expected one of "
            f"{iso_minutes(times[0])} .. {iso_minutes(times[-1])}"
        )
    out = ds.isel(time=i) if "time" in ds.dims else ds
    if "member" in out.dims:
        members = list(np.atleast_1d(out["member"].values))
        if member is None:
            member = members[0]
        if member not in members:
            raise InputError(f"member {member}: not in the run; expected one of {members}")
        out = out.sel(member=member)
    return out, times[i]


def level_field_c(ds_t, field="theta_w", level=850.0):
    """Return a shading field on one level in degrees Celsius [degC], as numpy.

    Parameters
    ----------
    ds_t : xarray.Dataset
        Canonical run at one time.
    field : {"theta_w", "theta"}
    level : float
        Pressure level [hPa].

    Points where the level lies below the model surface (``ps`` or ``zsfc``)
    are NaN: the map leaves them unshaded, as it does missing values.
    """
    if field not in FIELDS:
        raise InputError(f"field {field!r}: unknown; expected one of {', '.join(FIELDS)}")
    da = thermo.level_field(ds_t, FIELDS[field][1], level)
    values = np.asarray(da.values, dtype=float) - T0_K
    # the level below the model surface: extrapolated values, left unshaded
    ground, _ = below_ground(ds_t, level)
    if ground is not None and ground.shape == values.shape[-2:]:
        values = np.where(ground, np.nan, values)
    return values


def _lonlat2d(ds):
    lon = np.asarray(ds["lon"].values, dtype=float)
    lat = np.asarray(ds["lat"].values, dtype=float)
    if lon.ndim == 1:
        lon = np.rad2deg(np.unwrap(np.deg2rad(lon)))
        lon, lat = np.meshgrid(lon, lat)
    return lon, lat


def _inner_extent(ds, projection):
    """Projected rectangle mostly inside the grid's outline [projection units].

    Halfway between the rectangle inscribed in the (curved) grid outline and the
    one around it: little blank corner, little lost domain.
    """
    lon, lat = _lonlat2d(ds)
    pts = projection.transform_points(_pc(), lon, lat)
    x, y = pts[..., 0], pts[..., 1]
    ok = np.isfinite(x) & np.isfinite(y)
    if not ok.any():
        raise InputError("dataset: grid cannot be placed on a map; expected valid lat/lon")
    x = np.where(ok, x, np.nan)
    y = np.where(ok, y, np.nan)
    west, east, south, north = x[:, 0], x[:, -1], y[0, :], y[-1, :]
    if np.nanmean(east) < np.nanmean(west):  # columns run westward
        west, east = east, west
    if np.nanmean(north) < np.nanmean(south):  # rows run southward
        south, north = north, south
    x0 = 0.5 * (np.nanmax(west) + np.nanmin(west))
    x1 = 0.5 * (np.nanmin(east) + np.nanmax(east))
    y0 = 0.5 * (np.nanmax(south) + np.nanmin(south))
    y1 = 0.5 * (np.nanmin(north) + np.nanmax(north))
    if not (x1 > x0 and y1 > y0):  # odd grid orientation: the full box
        x0, x1, y0, y1 = np.nanmin(x), np.nanmax(x), np.nanmin(y), np.nanmax(y)
    return float(x0), float(x1), float(y0), float(y1)


#: room under the maps for graticule labels [inches] and for the colour key [inches]
LABEL_IN = 0.3
KEY_IN = 0.62


def map_axes(ds, *, nrows=1, ncols=1, width_in=10.0, max_height_in=9.0, bottom_in=None,
             extent=None, hspace=0.12, wspace=0.05, panel_header_in=0.0):
    """Make a briefing figure of map axes fitting the run's domain.

    Parameters
    ----------
    ds : xarray.Dataset
        Canonical run (for the domain and projection).
    nrows, ncols : int
        Grid of maps.
    width_in, max_height_in : float
        Figure width and largest height [inches]; the height follows the domain's shape.
    bottom_in : float, optional
        Room under the maps for graticule labels and the colour key [inches];
        default ``LABEL_IN + KEY_IN`` (see :func:`colour_key`).
    extent : (west, east, south, north), optional
        Map extent [degrees]; default the grid's inner rectangle.
    hspace, wspace : float
        Space between maps.
    panel_header_in : float
        Extra room above each row (panel titles) [inches].

    Returns
    -------
    fig, axes
        As :func:`kit.charts.style.new_figure`.
    """
    if bottom_in is None:
        bottom_in = LABEL_IN + KEY_IN
    proj = style.map_projection(extent if extent is not None else ds)
    if extent is None:
        x0, x1, y0, y1 = _inner_extent(ds, proj)
    else:
        w, e, s, n = extent
        lons = np.concatenate([np.linspace(w, e, 50), np.full(50, e), np.linspace(e, w, 50),
                               np.full(50, w)])
        lats = np.concatenate([np.full(50, s), np.linspace(s, n, 50), np.full(50, n),
                               np.linspace(n, s, 50)])
        pts = proj.transform_points(_pc(), lons, lats)
        x0, x1 = np.nanmin(pts[:, 0]), np.nanmax(pts[:, 0])
        y0, y1 = np.nanmin(pts[:, 1]), np.nanmax(pts[:, 1])
    aspect = (y1 - y0) / (x1 - x0)
    left_in, right_in = 0.55, 0.25
    map_w = (width_in - left_in - right_in - (ncols - 1) * wspace * 2.0) / ncols
    map_h = map_w * aspect
    fixed = style.HEADER_IN + style.FOOTER_IN + bottom_in + 0.1
    height = fixed + nrows * (map_h + panel_header_in) + (nrows - 1) * hspace * map_h
    if height > max_height_in:  # too tall: narrower maps instead (cartopy keeps the aspect)
        height = max_height_in
    fig, axes = style.new_figure(
        nrows, ncols, projection=proj, figsize=(width_in, max(height, 4.0)),
        bottom_in=bottom_in, left_in=left_in, right_in=right_in, top_in=0.1 + panel_header_in,
        hspace=hspace + (0.25 if panel_header_in else 0.0), wspace=wspace,
    )
    for ax in np.atleast_1d(axes).ravel():
        ax.set_extent([x0, x1, y0, y1], crs=proj)
        ax.set_facecolor(NO_DATA)  # outside the model domain
    return fig, axes


def _map_xy(ax, ds):
    """Grid points in the map's projection coordinates (contouring there is fast) [m]."""
    lon, lat = _lonlat2d(ds)
    key = (id(ax.projection), lon.shape, float(lon[0, 0]), float(lat[0, 0]), float(lon[-1, -1]),
           float(lat[-1, -1]))
    cache = ax.__dict__.setdefault("_frontshift_xy", {})
    if key not in cache:
        pts = ax.projection.transform_points(_pc(), lon, lat)
        cache[key] = (pts[..., 0], pts[..., 1])
    return cache[key]


def colour_key(fig, mappable, label, *, ticks=None, left=None, width=None):
    """Add a horizontal colour key centred in the band under the maps.

    Returns
    -------
    matplotlib.colorbar.Colorbar
    """
    width_in, height = fig.get_size_inches()
    key_w = width if width is not None else min(0.6, 6.5 / width_in)
    x0 = left if left is not None else (1 - key_w) / 2
    cax = fig.add_axes([x0, (style.FOOTER_IN + 0.28) / height, key_w,
                        0.12 / height])
    cax.set_gid("frontshift-colour-key")
    cb = fig.colorbar(mappable, cax=cax, orientation="horizontal", ticks=ticks)
    cb.set_label(label, fontsize=style.FONT["label"], labelpad=1)
    cb.ax.tick_params(labelsize=style.FONT["tick"], pad=1, length=2)
    return cb


def draw_shading(ax, ds_t, *, field="theta_w", level=850.0, levels=None, step=1.0, alpha=0.9):
    """Shade theta-w (or theta) on one level [degC] with the kit's palette.

    Returns
    -------
    matplotlib.contour.QuadContourSet
    """
    values = level_field_c(ds_t, field, level)
    if levels is None:
        levels = style.thetaw_levels(values, step)
    x, y = _map_xy(ax, ds_t)
    return ax.contourf(x, y, values, levels=levels, cmap=style.THETAW_CMAP, extend="both",
                       alpha=alpha, zorder=1)


def draw_isobars(ax, ds_t, *, interval_hpa=4.0, labels=True, linewidth=0.8):
    """Draw MSLP isobars every ``interval_hpa`` [hPa], labelled; None when no ``mslp``.

    Returns
    -------
    matplotlib.contour.QuadContourSet or None
    """
    if "mslp" not in ds_t:
        return None
    hpa = np.asarray(ds_t["mslp"].values, dtype=float) / 100.0
    finite = hpa[np.isfinite(hpa)]
    if finite.size == 0:
        return None
    lo = np.floor(finite.min() / interval_hpa) * interval_hpa
    hi = np.ceil(finite.max() / interval_hpa) * interval_hpa
    levels = np.arange(lo, hi + interval_hpa / 2, interval_hpa)
    x, y = _map_xy(ax, ds_t)
    cs = ax.contour(x, y, hpa, levels=levels, colors=style.BRIEFING_COLOURS["isobar"],
                    linewidths=linewidth, zorder=4)
    cs.set_gid("frontshift-isobars")
    if labels and len(levels) > 1:
        ax.clabel(cs, levels=levels, fmt="%d", fontsize=style.FONT["small"], inline=True,
                  inline_spacing=2)
    return cs


def _local_tangent(lon, lat):
    """Return unit tangents (east, north) along a line in the local plane [1]."""
    lon = np.rad2deg(np.unwrap(np.deg2rad(np.asarray(lon, dtype=float))))
    lat = np.asarray(lat, dtype=float)
    de = np.gradient(lon) * np.cos(np.deg2rad(lat))
    dn = np.gradient(lat)
    norm = np.hypot(de, dn)
    norm[norm == 0] = 1.0
    return de / norm, dn / norm


def symbol_side(front):
    """Vertex order so that the WMO symbols face the way the front moves.

    MetPy draws front symbols on the left of the line's drawing direction.
    Cold and quasi-stationary fronts need their triangles on the warm side
    (opposite the cold-side normal); warm fronts their semicircles on the cold
    side.

    Parameters
    ----------
    front : kit.science.fronts.Front

    Returns
    -------
    lon, lat : ndarray
        Vertices [degrees], reversed where needed.
    """
    lon = np.asarray(front.lon, dtype=float)
    lat = np.asarray(front.lat, dtype=float)
    if lon.size < 2:
        return lon, lat
    te, tn = _local_tangent(lon, lat)
    left_e, left_n = -tn, te
    want = 1.0 if front.kind == "warm" else -1.0
    ne = np.asarray(front.normal_east, dtype=float)
    nn = np.asarray(front.normal_north, dtype=float)
    score = np.nansum(want * (left_e * ne + left_n * nn))
    if score < 0:
        return lon[::-1], lat[::-1]
    return lon, lat


def _front_effect(kind, size, spacing=1.6):
    c = style.FRONT_COLOURS
    if kind == "cold":
        return ColdFront(color=c["cold"], size=size, spacing=spacing)
    if kind == "warm":
        return WarmFront(color=c["warm"], size=size, spacing=spacing)
    if kind == "quasi-stationary":
        return StationaryFront(colors=(c["warm"], c["cold"]), size=size, spacing=spacing)
    raise InputError(f"front kind {kind!r}: unknown; expected cold, warm or quasi-stationary")


def _speed_kt(front):
    """Give the front's speed label [kt]: the same number as ``speed_kt`` in fronts.csv."""
    return people_speed(front)["speed_kt"]


def map_pieces(ax, lon, lat):
    """Project a line onto the map and cut it where it leaves the map.

    The line is cut, in map coordinates, where a step jumps more than a
    quarter of the projection's width (it crossed the map's seam, wherever
    the central longitude puts it) and where it leaves the visible extent;
    cartopy does this for its own geometries, but a plain projected line
    would be drawn right round the globe.

    Returns
    -------
    list of ndarray (n, 2)
        Pieces of at least two points, in map coordinates.
    """
    pts = ax.projection.transform_points(_pc(), np.asarray(lon, float), np.asarray(lat, float))
    x, y = pts[:, 0], pts[:, 1]
    ok = np.isfinite(x) & np.isfinite(y)
    x0, x1 = ax.get_xlim()
    y0, y1 = ax.get_ylim()
    mx, my = 0.01 * (x1 - x0), 0.01 * (y1 - y0)
    ok &= (x >= x0 - mx) & (x <= x1 + mx) & (y >= y0 - my) & (y <= y1 + my)
    xl = ax.projection.x_limits
    width = abs(xl[1] - xl[0]) if np.all(np.isfinite(xl)) else abs(x1 - x0)
    jump = np.zeros(x.size, dtype=bool)
    jump[1:] = np.abs(np.diff(x)) > 0.25 * width
    pieces, cur = [], []
    for k in range(x.size):
        if not ok[k] or jump[k]:
            if len(cur) >= 2:
                pieces.append(np.asarray(cur))
            cur = []
        if ok[k]:
            cur.append((x[k], y[k]))
    if len(cur) >= 2:
        pieces.append(np.asarray(cur))
    return pieces


def _far_from(placed, xy, min_dist):
    return all(np.hypot(xy[0] - p[0], xy[1] - p[1]) >= min_dist for p in placed)


def draw_fronts(ax, fronts, *, size=7.0, linewidth=2.2, labels=True, min_label_km=800.0):
    """Draw fronts with WMO symbols; label the longer ones with their speed [kt].

    Parameters
    ----------
    ax : cartopy GeoAxes
    fronts : list of kit.science.fronts.Front
    size : float
        Symbol size [points].
    linewidth : float
        Line width [points].
    labels : bool
        Write the front speed (knots) beside the middle of each line: only
        lines of at least ``min_label_km`` with a speed, longest first, and
        never closer than 8 % of the map width to a label already placed.
    min_label_km : float
        Shortest line that gets a speed label [km].

    Returns
    -------
    list of matplotlib.lines.Line2D
        One line per drawn piece, with the MetPy path effect attached.
    """
    lines = []
    placed = []
    x0, x1 = ax.get_xlim()
    min_dist = 0.08 * abs(x1 - x0)
    for front in sorted(fronts, key=lambda f: -float(f.length_km or 0.0)):
        lon, lat = symbol_side(front)
        if lon.size < 2:
            continue
        colour = style.FRONT_COLOURS["cold" if front.kind == "quasi-stationary" else front.kind]
        # project once here: the symbol path effects would re-project the line at every pass
        pieces = map_pieces(ax, lon, lat)
        for xy in pieces:
            (line,) = ax.plot(xy[:, 0], xy[:, 1], color=colour, linewidth=linewidth,
                              path_effects=[_front_effect(front.kind, size)], zorder=6,
                              solid_capstyle="round")
            line.set_gid(f"frontshift-front-{front.kind}")
            lines.append(line)
        if not (labels and pieces) or float(front.length_km or 0.0) < min_label_km:
            continue
        kt = _speed_kt(front)
        if kt is None:
            continue
        main = max(pieces, key=len)
        xy = main[len(main) // 2]
        if not _far_from(placed, xy, min_dist):
            continue
        placed.append(xy)
        ax.text(xy[0], xy[1], f"{kt:.0f} kt", fontsize=style.FONT["small"], color=colour,
                fontweight="bold", ha="left", va="bottom", path_effects=_HALO, zorder=7,
                clip_on=True)
    return lines


def quiet_corner(ax, fronts=(), sites=None):
    """Legend location in the map corner with the fewest front points and sites."""
    x0, x1 = ax.get_xlim()
    y0, y1 = ax.get_ylim()
    xs, ys = [], []
    for f in fronts:
        for xy in map_pieces(ax, f.lon, f.lat):
            xs.append(xy[:, 0])
            ys.append(xy[:, 1])
    if sites is not None and len(sites):
        pts = ax.projection.transform_points(
            _pc(), np.asarray(sites["lon"], float), np.asarray(sites["lat"], float))
        xs.append(pts[:, 0])
        ys.append(pts[:, 1])
    if not xs:
        return "upper left"
    x = (np.concatenate(xs) - x0) / (x1 - x0)
    y = (np.concatenate(ys) - y0) / (y1 - y0)
    boxes = {"upper left": (x < 0.3) & (y > 0.7), "upper right": (x > 0.7) & (y > 0.7),
             "lower left": (x < 0.3) & (y < 0.3), "lower right": (x > 0.7) & (y < 0.3)}
    return min(boxes, key=lambda k: int(np.sum(boxes[k])))


def kind_summary(fronts):
    """Return e.g. "2 cold fronts, 1 quasi-stationary front" (empty when none)."""
    counts = {k: sum(f.kind == k for f in fronts) for k in style.FRONT_COLOURS}
    # the legend's labels, each made a noun ("quasi-stationary" -> "... front")
    names = {k: v if v.endswith("front") else f"{v} front" for k, v in style.KIND_LABELS.items()}
    return ", ".join(f"{n} {names[k]}{'s' if n != 1 else ''}" for k, n in counts.items() if n)


def draw_sites(ax, sites, *, names=True):
    """Mark and name the sites (a DataFrame with ``name, lat, lon``).

    Returns
    -------
    list of matplotlib artists
    """
    if sites is None or len(sites) == 0:
        return []
    for col in ("name", "lat", "lon"):
        if col not in sites:
            raise InputError(f"sites: column '{col}' missing; expected name, lat, lon")
    colours = style.BRIEFING_COLOURS
    out = [ax.scatter(sites["lon"], sites["lat"], s=26, marker="o", c=colours["site_face"],
                      edgecolors=colours["site"], linewidths=0.9, transform=_pc(), zorder=8)]
    out[0].set_gid("frontshift-sites")
    if names:
        for _, row in sites.iterrows():
            out.append(ax.annotate(
                str(row["name"]), (row["lon"], row["lat"]), xycoords=_pc()._as_mpl_transform(ax),
                xytext=(4, 3), textcoords="offset points", fontsize=style.FONT["small"],
                color=colours["site"], path_effects=_HALO, zorder=9, annotation_clip=True,
            ))
    return out


def _lonlat_span(ax):
    """Longitude/latitude span of a map's frame [degrees], contiguous across the dateline."""
    x0, x1, y0, y1 = ax.get_extent()
    t = np.linspace(0.0, 1.0, 40)
    xs = np.concatenate([x0 + (x1 - x0) * t, np.full(40, x1), x1 - (x1 - x0) * t, np.full(40, x0)])
    ys = np.concatenate([np.full(40, y0), y0 + (y1 - y0) * t, np.full(40, y1), y1 - (y1 - y0) * t])
    pts = _pc().transform_points(ax.projection, xs, ys)
    lon, lat = pts[:, 0], pts[:, 1]
    ok = np.isfinite(lon) & np.isfinite(lat)
    if not ok.any():
        return -180.0, 180.0, -90.0, 90.0
    lon = np.rad2deg(np.unwrap(np.deg2rad(lon[ok])))
    return float(lon.min()), float(lon.max()), float(lat[ok].min()), float(lat[ok].max())


def add_graticule(ax, *, labels=True, bottom=True, left=True):
    """Add a light graticule, labelled on the left and bottom edges.

    Returns
    -------
    cartopy.mpl.gridliner.Gridliner
    """
    gl = ax.gridlines(draw_labels=labels, linewidth=0.4, color=style.BRIEFING_COLOURS[
        "graticule"], alpha=0.8, linestyle=(0, (2, 3)), x_inline=False, y_inline=False,
        zorder=2.5)

    w, e, s, n = _lonlat_span(ax)

    def nice(span, count):
        for step in (1, 2, 5, 10, 15, 20, 30, 45, 60, 90):
            if span / step <= count:
                return step
        return 90

    dlon, dlat = nice(e - w, 7), nice(n - s, 6)
    gl.xlocator = mticker.FixedLocator(np.arange(-360.0, 361.0, dlon))
    gl.ylocator = mticker.FixedLocator(np.arange(-90.0, 91.0, dlat))
    if labels:
        gl.top_labels = False
        gl.right_labels = False
        gl.bottom_labels = bottom
        gl.left_labels = left
        gl.rotate_labels = False
        gl.xlabel_style = {"size": style.FONT["tick"], "color": style.INK}
        gl.ylabel_style = {"size": style.FONT["tick"], "color": style.INK}
    ax._frontshift_gridliner = gl
    return gl


def front_legend(ax, *, kinds=("cold", "warm", "quasi-stationary"), isobars=True, sites=False,
                 loc="upper left", isobar_text="MSLP every 4 hPa"):
    """Add a compact key: front kinds (with their symbols), isobars, sites."""
    handles = []
    for kind in kinds:
        colour = style.FRONT_COLOURS["cold" if kind == "quasi-stationary" else kind]
        handles.append(Line2D([0, 1], [0, 0], color=colour, linewidth=2.0,
                              path_effects=[_front_effect(kind, 4.0, spacing=1.0)],
                              label=style.KIND_LABELS[kind]))
    if isobars:
        handles.append(Line2D([0], [0], color=style.BRIEFING_COLOURS["isobar"], linewidth=0.8,
                              label=isobar_text))
    if sites:
        handles.append(Line2D([0], [0], marker="o", linestyle="none",
                              markerfacecolor=style.BRIEFING_COLOURS["site_face"],
                              markeredgecolor=style.BRIEFING_COLOURS["site"], label="site"))
    leg = ax.legend(handles=handles, loc=loc, fontsize=style.FONT["small"], handlelength=4.5,
                    borderpad=0.5, labelspacing=0.5, framealpha=0.92)
    leg.set_zorder(20)
    return leg


def fronts_at(fronts, valid, level=None, member=None):
    """Return the fronts of one valid time (and level and member) out of a run's fronts."""
    out = []
    for f in fronts or []:
        if np.datetime64(f.valid_time, "ns") != np.datetime64(valid, "ns"):
            continue
        if level is not None and f.level_hpa is not None and abs(f.level_hpa - level) > 1e-6:
            continue
        if member is not None and f.member is not None and f.member != member:
            continue
        out.append(f)
    return out


def _member_of(ds, member):
    if "member" in ds.dims and member is None:
        return int(np.atleast_1d(ds["member"].values)[0])
    return member


def front_map(ds, fronts, *, time, level=850.0, field="theta_w", sites=None, member=None,
              isobars=True, extent=None, labels=True, width_in=10.0):
    """Map the fronts of one valid time in the briefing style.

    Parameters
    ----------
    ds : xarray.Dataset
        Canonical run.
    fronts : list of kit.model.Front
        Fronts of the run's analysis (any times; those at ``time`` are drawn);
        a map never looks for fronts of its own.
    time : datetime-like
        Valid time (UTC).
    level : float
        Front level and shading level [hPa].
    field : {"theta_w", "theta"}
        Shaded field.
    sites : pandas.DataFrame, optional
        Sites to mark (``name, lat, lon``).
    member : int, optional
        Ensemble member (default the first).
    isobars : bool
        Draw MSLP isobars (when the run has ``mslp``).
    extent : (west, east, south, north), optional
        Map extent [degrees]; default the grid's domain.
    labels : bool
        Speed labels on the fronts.
    width_in : float
        Figure width [inches].

    Returns
    -------
    matplotlib.figure.Figure
    """
    member = _member_of(ds, member)
    ds_t, valid = select_time(ds, time, member=member)
    if fronts is None:
        raise InputError("front_map: no fronts given; expected the fronts of the run's "
                         "analysis (kit.analyse(run).fronts)")
    drawn = fronts_at(fronts, valid, level, member)
    fig, ax = map_axes(ds, extent=extent, width_in=width_in)
    shading = draw_shading(ax, ds_t, field=field, level=level)
    add_coastlines(ax)
    add_graticule(ax)
    has_isobars = isobars and draw_isobars(ax, ds_t) is not None
    draw_fronts(ax, drawn, labels=labels)
    draw_sites(ax, sites)
    front_legend(ax, isobars=has_isobars, sites=sites is not None and len(sites) > 0,
                 loc=quiet_corner(ax, drawn, sites))
    label = FIELDS[field][0]
    colour_key(fig, shading, f"{label} at {level:g} hPa [\u00b0C]")
    summary = kind_summary(drawn)
    extra = f"Fronts at {level:g} hPa on {label}" + (f" (member {member})" if member is not None
                                                     else "")
    extra += f": {summary}" if summary else ": no fronts found"
    style.stamp(fig, run=ds.attrs.get("run", "unnamed run"), valid_time=valid,
                lead_h=style.lead_hours(ds, valid), source=ds, extra=extra,
                thin=ds.attrs.get("thin"))
    fig._frontshift.update(kind="front_map", fronts=len(drawn), level=level, field=field)
    return fig


def _pick_times(times, max_panels):
    """Evenly spread valid times, first and last included."""
    if len(times) <= max_panels:
        return list(times)
    idx = np.unique(np.round(np.linspace(0, len(times) - 1, max_panels)).astype(int))
    return [times[i] for i in idx]


def fronts_through_time(ds, fronts, *, times=None, level=850.0, field="theta_w", sites=None,
                        member=None, ncols=3, max_panels=9, width_in=11.0):
    """Small multiples: the run's fronts at several valid times, one shared colour key.

    Parameters
    ----------
    ds : xarray.Dataset
        Canonical run.
    fronts : list of kit.science.fronts.Front
        Fronts of the run at any valid times.
    times : list of datetime-like, optional
        Valid times to show; default up to ``max_panels`` spread over the run.
    level, field, sites, member
        As :func:`front_map`.
    ncols : int
        Maps per row.
    max_panels : int
        Most maps when ``times`` is None.
    width_in : float
        Figure width [inches].

    Returns
    -------
    matplotlib.figure.Figure
    """
    member = _member_of(ds, member)
    all_times = _times(ds)
    chosen = _pick_times(list(all_times), max_panels) if times is None else [
        select_time(ds, t, member=member)[1] for t in times]
    if not chosen:
        raise InputError("fronts_through_time: no valid times to show; expected at least one")
    ncols = max(1, min(ncols, len(chosen)))
    nrows = int(np.ceil(len(chosen) / ncols))
    fig, axes = map_axes(ds, nrows=nrows, ncols=ncols, width_in=width_in, max_height_in=14.0,
                         panel_header_in=0.18, wspace=0.06, hspace=0.05)
    axes = np.atleast_1d(axes).ravel()
    # one colour scale for all panels
    fields = [level_field_c(select_time(ds, t, member=member)[0], field, level) for t in chosen]
    levels = style.thetaw_levels(np.concatenate([f.ravel() for f in fields]), 1.0)
    shading = None
    for k, ax in enumerate(axes):
        if k >= len(chosen):
            ax.set_visible(False)
            continue
        ds_t, valid = select_time(ds, chosen[k], member=member)
        shading = draw_shading(ax, ds_t, field=field, level=level, levels=levels)
        add_coastlines(ax, linewidth=0.5)
        row, col = divmod(k, ncols)
        add_graticule(ax, bottom=(row == nrows - 1) or (k + ncols >= len(chosen)),
                      left=(col == 0))
        draw_isobars(ax, ds_t, interval_hpa=8.0, labels=False, linewidth=0.5)
        draw_fronts(ax, fronts_at(fronts, valid, level, member), size=4.0, linewidth=1.5,
                    labels=False)
        if sites is not None and len(sites):
            draw_sites(ax, sites, names=False)
        lead = style.lead_hours(ds, valid)
        ax.set_title(f"{style.format_lead(lead)}   {pd.Timestamp(valid):%a %d %H UTC}",
                     fontsize=style.FONT["label"], loc="left", pad=3)
    label = FIELDS[field][0]
    spare_slot = len(chosen) < len(axes)
    colour_key(fig, shading, f"{label} at {level:g} hPa [\u00b0C]",
               left=None if spare_slot else 0.06, width=None if spare_slot else 0.5)
    if spare_slot:  # the key of symbols goes into the first empty slot
        spare = axes[len(chosen)]
        spare.set_visible(True)
        spare.axis("off")
        front_legend(spare, isobars="mslp" in ds, loc="center", isobar_text="MSLP every 8 hPa")
    else:  # no spare slot: the key of symbols goes into the band under the maps, right
        leg = front_legend(axes[-1], isobars="mslp" in ds, isobar_text="MSLP every 8 hPa")
        handles, labels = leg.legend_handles, [t.get_text() for t in leg.get_texts()]
        leg.remove()
        width, height = fig.get_size_inches()
        fig.legend(handles=handles, labels=labels, loc="lower right", ncol=2,
                   bbox_to_anchor=(0.995, (style.FOOTER_IN + 0.02) / height),
                   fontsize=style.FONT["small"], handlelength=4.5, framealpha=0.92)
    style.stamp(fig, run=ds.attrs.get("run", "unnamed run"), valid_time=(chosen[0], chosen[-1]),
                lead_h=(style.lead_hours(ds, chosen[0]), style.lead_hours(ds, chosen[-1])),
                source=ds, extra=f"Fronts at {level:g} hPa through the run"
                + (f" (member {member})" if member is not None else ""),
                thin=ds.attrs.get("thin"))
    fig._frontshift.update(kind="fronts_through_time", panels=len(chosen), level=level)
    return fig


def fronts_overview(ds, fronts, *, level=850.0, sites=None, member=None, width_in=10.0):
    """One map of every front line of the run, coloured by lead time.

    Line style tells the kind (cold solid, warm dashed, quasi-stationary
    dotted); the track id is written at each track's last position.

    Parameters
    ----------
    ds : xarray.Dataset
        Canonical run.
    fronts : list of kit.science.fronts.Front
        Fronts of the run at any valid times (tracked ones carry ``track``).
    level, sites, member
        As :func:`front_map`.
    width_in : float
        Figure width [inches].

    Returns
    -------
    matplotlib.figure.Figure
    """
    member = _member_of(ds, member)
    times = _times(ds)
    chosen = [f for f in fronts or []
              if (level is None or abs(f.level_hpa - level) < 1e-6)
              and (member is None or f.member is None or f.member == member)]
    fig, ax = map_axes(ds, width_in=width_in)
    ax.set_facecolor(SEA)
    add_coastlines(ax, land=True)
    add_graticule(ax)
    leads = [style.lead_hours(ds, t) for t in times]
    lead_min = min(v for v in leads if v is not None) if any(v is not None for v in leads) else 0
    lead_max = max(v for v in leads if v is not None) if any(v is not None for v in leads) else 1
    norm = mcolors.Normalize(vmin=lead_min, vmax=max(lead_max, lead_min + 1))
    dashes = {"cold": "-", "warm": (0, (5, 2)), "quasi-stationary": (0, (1.5, 1.5))}
    last = {}
    for f in sorted(chosen, key=lambda f: np.datetime64(f.valid_time, "ns")):
        lead = style.lead_hours(ds, f.valid_time)
        lead = 0.0 if lead is None else lead
        lon = np.rad2deg(np.unwrap(np.deg2rad(np.asarray(f.lon, dtype=float))))
        (line,) = ax.plot(lon, f.lat, color=style.LEAD_CMAP(norm(lead)), linewidth=1.6,
                          linestyle=dashes.get(f.kind, "-"), transform=_pc(), zorder=5)
        line.set_gid(f"frontshift-track-{f.kind}")
        if f.track is not None:
            last[f.track] = (lon[len(lon) // 2], f.lat[len(f.lat) // 2], f.kind)
    placed = []
    x0, x1 = ax.get_xlim()
    for track, (x, y, kind) in last.items():
        xy = ax.projection.transform_point(x, y, _pc())
        if not (np.all(np.isfinite(xy)) and _far_from(placed, xy, 0.05 * abs(x1 - x0))):
            continue  # labels never overlap: the later track keeps its line only
        placed.append(xy)
        ax.text(x, y, f"#{track}", transform=_pc(), fontsize=style.FONT["small"],
                fontweight="bold", color=style.FRONT_COLOURS["cold" if kind == "quasi-stationary"
                                                              else kind],
                path_effects=_HALO, zorder=7, clip_on=True)
    draw_sites(ax, sites)

    sm = ScalarMappable(norm=norm, cmap=style.LEAD_CMAP)
    span = norm.vmax - norm.vmin
    tick_step = 3 if span <= 24 else 6 if span <= 48 else 12 if span <= 120 else 24
    ticks = np.arange(np.ceil(norm.vmin / tick_step) * tick_step, norm.vmax + 1e-9, tick_step)
    colour_key(fig, sm, "lead time [h]", ticks=ticks)
    handles = [Line2D([0], [0], color=style.INK, linestyle=dashes[k], linewidth=1.6,
                      label=style.KIND_LABELS[k]) for k in ("cold", "warm", "quasi-stationary")]
    ax.legend(handles=handles, loc=quiet_corner(ax, chosen, sites), fontsize=style.FONT["small"],
              framealpha=0.92).set_zorder(20)
    t0, t1 = times[0], times[-1]
    style.stamp(fig, run=ds.attrs.get("run", "unnamed run"), valid_time=(t0, t1),
                lead_h=(style.lead_hours(ds, t0), style.lead_hours(ds, t1)), source=ds,
                extra=f"Front lines at {level:g} hPa through the run, coloured by lead time"
                + (f" (member {member})" if member is not None else "")
                + ("; #n = track" if last else ""), thin=ds.attrs.get("thin"))
    fig._frontshift.update(kind="fronts_overview", fronts=len(chosen), level=level)
    return fig


class MapSeries:
    """One map frame for a run, redrawn per valid time (fast: the frame is built once).

    Coastlines, graticule, sites, the key of symbols and the colour key are drawn
    once and rendered once as a transparent overlay; each :meth:`draw` renders
    only the weather layer (shading, isobars, fronts, header) and lays the
    overlay on top. The shading levels are the same for every valid time, so
    colours compare through the run. After :meth:`draw`, :attr:`fig` is the
    complete, stamped figure (for a PDF page or :func:`kit.products.files.save_figure`).

    Parameters
    ----------
    ds : xarray.Dataset
        Canonical run.
    sites : pandas.DataFrame, optional
        Sites to mark (``name, lat, lon``).
    level : float
        Front and shading level [hPa].
    field : {"theta_w", "theta"}
        Shaded field.
    member : int, optional
        Ensemble member (default the first).
    levels : array_like, optional
        Shading levels [degC]; default from the field at every valid time.
    width_in : float
        Figure width [inches].
    dpi : int
        Resolution of :meth:`draw`'s PNG [dots per inch].
    """

    def __init__(self, ds, *, sites=None, level=850.0, field="theta_w", member=None,
                 levels=None, width_in=10.0, dpi=110):


        if field not in FIELDS:
            raise InputError(f"field {field!r}: unknown; expected one of {', '.join(FIELDS)}")
        self.ds, self.level, self.field = ds, float(level), field
        self.member = _member_of(ds, member)
        self.dpi = dpi
        if levels is None:
            fields = [level_field_c(select_time(ds, t, member=self.member)[0], field, level)
                      for t in _times(ds)]
            levels = style.thetaw_levels(np.concatenate([f.ravel() for f in fields]))
        self.levels = np.asarray(levels, dtype=float)
        self.sites = sites if sites is not None else pd.DataFrame(columns=["name", "lat", "lon"])
        self.fig, self.ax = map_axes(ds, width_in=width_in)
        add_coastlines(self.ax)
        add_graticule(self.ax)
        if len(self.sites):
            draw_sites(self.ax, self.sites)
        # no isobars in the key of a run without mean-sea-level pressure (a thin run)
        front_legend(self.ax, isobars="mslp" in ds, sites=len(self.sites) > 0)
        norm = mcolors.BoundaryNorm(self.levels, style.THETAW_CMAP.N, extend="both")
        colour_key(self.fig, ScalarMappable(norm=norm, cmap=style.THETAW_CMAP),
                   f"{FIELDS[field][0]} at {self.level:g} hPa [\u00b0C]")
        self.layer = []
        # everything drawn so far is the static overlay
        self.static = [a for a in self.ax.get_children() if a.get_visible()
                       and a is not self.ax.patch and not isinstance(a, type(self.ax.spines.get(
                           "geo", None)))]
        self.static += [a for a in self.fig.axes if a is not self.ax]  # the colour key
        self._overlay = None
        self.fig._frontshift.update(kind="front_map", level=self.level, field=field)

    def _clear(self):
        for artist in self.layer:
            try:
                artist.remove()
            except (ValueError, AttributeError, NotImplementedError):
                pass
        self.layer = []

    def draw(self, time, fronts, *, site=None, run=None):
        """Draw one valid time; return the map as PNG bytes.

        Parameters
        ----------
        time : datetime-like
            Valid time (UTC), one of the run's.
        fronts : list of kit.science.fronts.Front
            Fronts of the run (those at ``time``, on the level and member, are drawn).
        site : pandas.Series, optional
            A site to ring (``lat``, ``lon``).
        run : str, optional
            Run label for the header (default ``ds.attrs["run"]``).

        Returns
        -------
        bytes
            PNG.
        """
        ds = self.ds
        ds_t, valid = select_time(ds, time, member=self.member)
        drawn = fronts_at(fronts, valid, self.level, self.member)
        self._clear()
        n_texts = len(self.ax.texts)
        self.layer.append(draw_shading(self.ax, ds_t, field=self.field, level=self.level,
                                       levels=self.levels))
        cs = draw_isobars(self.ax, ds_t)
        if cs is not None:
            self.layer.append(cs)
        self.layer.extend(draw_fronts(self.ax, drawn))
        if site is not None:
            (mark,) = self.ax.plot([site["lon"]], [site["lat"]], marker="o", markersize=11,
                                   markerfacecolor="none", markeredgecolor="#111111",
                                   markeredgewidth=1.8, transform=_pc(), zorder=10)
            self.layer.append(mark)
        self.layer.extend(self.ax.texts[n_texts:])  # isobar and speed labels of this layer
        summary = kind_summary(drawn) or "no fronts found"
        extra = (f"Fronts at {self.level:g} hPa on {FIELDS[self.field][0]}"
                 + (f" (member {self.member})" if self.member is not None else "")
                 + f": {summary}")
        style.stamp(self.fig, run=run or ds.attrs.get("run", "unnamed run"), valid_time=valid,
                    lead_h=style.lead_hours(ds, valid), source=ds, extra=extra,
                    thin=ds.attrs.get("thin"))
        self.fig._frontshift.update(fronts=len(drawn), valid_time=valid)
        self.drawn = drawn
        return self._composite()

    def _render(self, show_static, show_layer, transparent):
        """Draw the figure with some artists hidden; return the RGBA pixels."""
        canvas = self.fig.canvas if isinstance(self.fig.canvas, FigureCanvasAgg) else (
            FigureCanvasAgg(self.fig))
        saved_dpi = self.fig.dpi
        self.fig.dpi = self.dpi
        hidden = [a for a in self.static if not show_static] + [
            a for a in self.layer if not show_layer]
        stamp_artists = [a for a in (self.fig._frontshift.get("artists") or {}).values()
                         if a is not None]
        hidden += [a for a in stamp_artists if not show_layer]
        patches = [self.fig.patch, self.ax.patch]
        alphas = [p.get_alpha() for p in patches]
        try:
            for a in hidden:
                a.set_visible(False)
            if transparent:
                for p in patches:
                    p.set_alpha(0.0)
            canvas.draw()
            rgba = np.asarray(canvas.buffer_rgba()).copy()
        finally:
            for a in hidden:
                a.set_visible(True)
            for p, alpha in zip(patches, alphas, strict=True):
                p.set_alpha(alpha)
            self.fig.dpi = saved_dpi
        return rgba

    def _composite(self):
        """Compose the weather layer under the static overlay; PNG bytes."""
        if self._overlay is None:
            self._overlay = Image.fromarray(self._render(True, False, True), "RGBA")
        base = Image.fromarray(self._render(False, True, False), "RGBA")
        out = Image.alpha_composite(base, self._overlay)
        buf = io.BytesIO()
        out.convert("RGB").save(buf, format="PNG", compress_level=1)
        return buf.getvalue()
