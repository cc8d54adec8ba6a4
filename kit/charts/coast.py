"""Offline coastlines and land borders for cartopy maps.

cartopy installed from the package registry ships no coastline files and
fetches Natural Earth on first use; on a forecasting desk without internet that
fails or hangs. The kit bundles a small set derived from Natural Earth 1:110 m
(public domain; regenerate with ``scripts/make_coastlines.py``) in
``kit/data/coast/`` and:

- draws coastlines, land borders and an optional land tint from those files
  (:func:`add_coastlines`), or from finer Natural Earth files when they are
  already on the machine (cartopy's data folders);
- installs, once, a Natural Earth "downloader" in ``cartopy.config`` that
  never goes to the network (:func:`use_offline_cartopy`): files already on the
  machine are used, the bundled 110 m set answers for coastline, land and
  land borders at any scale, and anything else is a one-line error. So even
  ``cartopy.feature.COASTLINE`` works offline after the kit is imported.

Nothing here touches matplotlib until a map is drawn.
"""

import functools
from pathlib import Path

from kit.errors import InputError

__all__ = [
    "COAST_DIR",
    "BUNDLED",
    "bundled_path",
    "local_natural_earth",
    "use_offline_cartopy",
    "coast_geometries",
    "coast_feature",
    "add_coastlines",
]

#: the bundled folder, laid out as cartopy's Natural Earth data folder
COAST_DIR = Path(__file__).resolve().parent.parent / "data" / "coast"

#: bundled layers: our name -> (Natural Earth category, Natural Earth name)
BUNDLED = {
    "coastline": ("physical", "coastline"),
    "borders": ("cultural", "admin_0_boundary_lines_land"),
    "land": ("physical", "land"),
}
_BUNDLED_NE = {v: k for k, v in BUNDLED.items()}


def bundled_path(name):
    """Return the path of a bundled layer's shapefile (``coastline``, ``borders`` or ``land``).

    Parameters
    ----------
    name : str

    Returns
    -------
    pathlib.Path
    """
    try:
        category, ne_name = BUNDLED[name]
    except KeyError:
        raise InputError(
            f"coast layer {name!r}: unknown; expected one of {', '.join(BUNDLED)}"
        ) from None
    path = COAST_DIR / "shapefiles" / "natural_earth" / category / f"ne_110m_{ne_name}.shp"
    if not path.exists():
        raise InputError(
            f"{path}: bundled coastline file missing; expected it in the installed kit "
            "(regenerate with scripts/make_coastlines.py)"
        )
    return path


def _ne_candidates(resolution, category, name):
    """List where cartopy keeps Natural Earth files on this machine (not the bundled folder)."""
    import cartopy  # optional heavy dependency, loaded on use

    rel = Path("shapefiles") / "natural_earth" / category / f"ne_{resolution}_{name}.shp"
    dirs = []
    for key in ("pre_existing_data_dir", "data_dir"):
        value = cartopy.config.get(key)
        if value and Path(value).resolve() != COAST_DIR:
            dirs.append(Path(value))
    return [d / rel for d in dirs]


def local_natural_earth(resolution, category="physical", name="coastline"):
    """Return the path of a Natural Earth file already on this machine, or None (never downloads).

    Parameters
    ----------
    resolution : {"10m", "50m", "110m"}
    category : str
        ``physical`` or ``cultural``.
    name : str
        Natural Earth layer name, e.g. ``coastline``.

    Returns
    -------
    pathlib.Path or None
    """
    for cand in _ne_candidates(resolution, category, name):
        if cand.exists():
            return cand
    return None


def _make_offline_downloader(original):
    from cartopy.io import Downloader  # optional heavy dependency, loaded on use

    class OfflineNaturalEarth(Downloader):
        """Natural Earth look-up that uses local files only and never the network."""

        FORMAT_KEYS = ("config", "resolution", "category", "name")

        def __init__(self, original):
            super().__init__(
                getattr(original, "url_template", ""),
                getattr(original, "target_path_template", ""),
                getattr(original, "pre_downloaded_path_template", ""),
            )
            self.original = original

        def path(self, format_dict):
            res = format_dict.get("resolution")
            cat = format_dict.get("category")
            name = format_dict.get("name")
            local = local_natural_earth(res, cat, name)
            if local is not None:
                return local
            for getter in (self.pre_downloaded_path, self.target_path):
                try:
                    cand = getter(format_dict)
                except (KeyError, ValueError):
                    cand = None
                if cand is not None and Path(cand).exists():
                    return Path(cand)
            layer = _BUNDLED_NE.get((cat, name))
            if layer is not None:
                return bundled_path(layer)
            return self.acquire_resource(None, format_dict)

        def acquire_resource(self, target_path, format_dict):
            raise InputError(
                f"Natural Earth {format_dict.get('resolution')} "
                f"{format_dict.get('category')}/{format_dict.get('name')}: not on this machine "
                "and frontshift maps never download; expected a layer the kit bundles "
                f"({', '.join(BUNDLED)}) or the file in cartopy's data folder"
            )

    return OfflineNaturalEarth(original)


def _make_offline_gshhs():
    from cartopy.io import Downloader  # optional heavy dependency, loaded on use

    class NoGSHHS(Downloader):
        """GSHHS look-up that never downloads."""

        def __init__(self):
            super().__init__("", "", "")

        def path(self, format_dict):
            raise InputError(
                "GSHHS coastlines: not bundled and frontshift maps never download; "
                "expected kit.charts.coast.add_coastlines (bundled Natural Earth 110 m)"
            )

    return NoGSHHS()


@functools.lru_cache(maxsize=1)
def use_offline_cartopy():
    """Make cartopy's Natural Earth look-ups local-only (idempotent).

    When no Natural Earth coastline is on the machine, cartopy's
    ``pre_existing_data_dir`` is pointed at the bundled folder; the
    Natural Earth and GSHHS downloaders in ``cartopy.config['downloaders']``
    are replaced by ones that never use the network.

    Returns
    -------
    dict
        What was set: ``pre_existing_data_dir`` (Path or None when left alone).
    """
    import cartopy  # optional heavy dependency, loaded on use

    downloaders = cartopy.config.setdefault("downloaders", {})
    key = ("shapefiles", "natural_earth")
    original = downloaders.get(key)
    if original is None:
        from cartopy.io import shapereader  # optional heavy dependency, loaded on use

        original = shapereader.NEShpDownloader.default_downloader()
    downloaders[key] = _make_offline_downloader(original)
    downloaders[("shapefiles", "gshhs")] = _make_offline_gshhs()
    pre = None
    if not any(local_natural_earth(r) for r in ("10m", "50m", "110m")):
        cartopy.config["pre_existing_data_dir"] = COAST_DIR
        pre = COAST_DIR
    return {"pre_existing_data_dir": pre}


@functools.lru_cache(maxsize=8)
def coast_geometries(name="coastline", resolution="110m"):
    """Return the shapely geometries of a coast layer, lon/lat [degrees].

    Parameters
    ----------
    name : str
    resolution : {"110m", "50m", "10m"}
        Finer scales come from Natural Earth files already on the machine; the
        bundled set is 110 m.

    Returns
    -------
    tuple of shapely geometries
    """
    import shapefile  # optional heavy dependency, loaded on use
    from shapely.geometry import shape  # optional heavy dependency, loaded on use

    if resolution == "110m":
        path = bundled_path(name)
    else:
        category, ne_name = BUNDLED.get(name, (None, None))
        if category is None:
            bundled_path(name)  # raises the one-line error
        path = local_natural_earth(resolution, category, ne_name)
        if path is None:
            raise InputError(
                f"coast layer {name!r} at {resolution}: not on this machine; expected 110m "
                "(bundled) or Natural Earth files in cartopy's data folder"
            )
    with shapefile.Reader(str(path)) as reader:
        geoms = tuple(shape(s.__geo_interface__) for s in reader.shapes() if s.points)
    if not geoms:
        raise InputError(f"{path}: no shapes; expected coastline geometry")
    return geoms


def _best_resolution(name, extent_deg):
    """Pick the finest local scale of ``name`` for a map ``extent_deg`` wide [degrees]."""
    category, ne_name = BUNDLED.get(name, ("physical", "coastline"))
    if extent_deg is not None and extent_deg < 60.0 and local_natural_earth(
        "50m", category, ne_name
    ):
        return "50m"
    return "110m"


def coast_feature(name="coastline", *, resolution=None, extent_deg=None, **style):
    """Return a cartopy feature of a layer, from local files only.

    Parameters
    ----------
    name : str
        ``coastline``, ``borders`` or ``land``.
    resolution : str, optional
        Natural Earth scale; default the finest local one suited to ``extent_deg``.
    extent_deg : float, optional
        Map width [degrees of longitude] used to choose the scale.
    **style
        Matplotlib style of the feature (edgecolor, facecolor, linewidth...).

    Returns
    -------
    cartopy.feature.ShapelyFeature
    """
    import cartopy.crs as ccrs  # optional heavy dependency, loaded on use
    import cartopy.feature as cfeature  # optional heavy dependency, loaded on use

    use_offline_cartopy()
    res = resolution or _best_resolution(name, extent_deg)
    return cfeature.ShapelyFeature(coast_geometries(name, res), ccrs.PlateCarree(), **style)


def add_coastlines(ax, *, borders=True, land=False, colour="#4a4a4a", border_colour="#8c8c8c",
                   land_colour="#efece4", linewidth=0.7, zorder=3):
    """Draw offline coastlines (and land borders, land tint) on a cartopy map.

    Parameters
    ----------
    ax : cartopy.mpl.geoaxes.GeoAxes
    borders : bool
        Also draw land borders (dashed, lighter).
    land : bool
        Tint land (below everything else; useful on maps without shading).
    colour, border_colour, land_colour : str
        Matplotlib colours.
    linewidth : float
        Coastline width [points]; borders use 60 %.
    zorder : float
        Drawing order of the lines.

    Returns
    -------
    dict
        The feature artists: ``coastline`` and, when drawn, ``borders``, ``land``.
    """
    if not hasattr(ax, "add_feature"):
        raise InputError("add_coastlines: axes is not a cartopy map; expected a GeoAxes")
    import cartopy.crs as ccrs  # optional heavy dependency, loaded on use

    try:
        w, e, _, _ = ax.get_extent(ccrs.PlateCarree())
        width = abs(e - w)
    except (ValueError, RuntimeError):
        width = None
    out = {}
    if land:
        out["land"] = ax.add_feature(
            coast_feature("land", extent_deg=width, facecolor=land_colour, edgecolor="none"),
            zorder=0.5,
        )
    out["coastline"] = ax.add_feature(
        coast_feature("coastline", extent_deg=width, facecolor="none", edgecolor=colour,
                      linewidth=linewidth),
        zorder=zorder,
    )
    if borders:
        out["borders"] = ax.add_feature(
            coast_feature("borders", extent_deg=width, facecolor="none",
                          edgecolor=border_colour, linewidth=0.6 * linewidth,
                          linestyle=(0, (4, 2))),
            zorder=zorder - 0.1,
        )
    return out
