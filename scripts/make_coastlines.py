"""Regenerate the bundled offline coastline, land and land-border files (kit/data/coast/).

Source: Natural Earth 1:110 m admin-0 countries (public domain), as carried in
the ``geopandas/datasets/naturalearth_lowres`` folder of the geopandas 0.14.4
wheel. Get it without installing geopandas::

    pip download --no-deps geopandas==0.14.4 -d /tmp/gpd
    cd /tmp/gpd && unzip -o geopandas-0.14.4-py3-none-any.whl 'geopandas/datasets/*'
    python scripts/make_coastlines.py /tmp/gpd/geopandas/datasets/naturalearth_lowres

What it derives with shapely:
- land: the union of all country polygons;
- coastline: the boundary of that union, without the artificial edges at the
  +-180 meridian and along the South Pole;
- land borders: every country boundary that is not coastline.

The files are written with pyshp in cartopy's Natural Earth layout
(``shapefiles/natural_earth/{physical,cultural}/ne_110m_*.shp``) so that
:mod:`kit.charts.coast` can hand the folder to cartopy as pre-existing data.
"""

import argparse
import sys
from pathlib import Path

import shapefile
import shapely
from shapely.geometry import LineString, shape

OUT = Path(__file__).resolve().parents[1] / "kit" / "data" / "coast"
WGS84_PRJ = (
    'GEOGCS["GCS_WGS_1984",DATUM["D_WGS_1984",SPHEROID["WGS_1984",6378137.0,298.257223563]],'
    'PRIMEM["Greenwich",0.0],UNIT["Degree",0.0174532925199433]]'
)
#: decimal places kept [degrees]; 1e-4 deg is about 11 m, far below 1:110 m detail
DIGITS = 4


def _artificial(seg):
    """Tell whether a segment lies on the +-180 meridian or along the South Pole edge."""
    (x0, y0), (x1, y1) = seg
    on_dateline = abs(abs(x0) - 180.0) < 1e-6 and abs(abs(x1) - 180.0) < 1e-6
    on_pole = y0 < -89.9 and y1 < -89.9
    return on_dateline or on_pole


def _clean_lines(geom):
    """Split lines at artificial segments; return a list of coordinate lists."""
    out = []
    for line in getattr(geom, "geoms", [geom]):
        if line.is_empty or not isinstance(line, LineString):
            continue
        coords = [tuple(round(v, DIGITS) for v in c) for c in line.coords]
        run = [coords[0]]
        for a, b in zip(coords[:-1], coords[1:], strict=True):
            if _artificial((a, b)):
                if len(run) > 1:
                    out.append(run)
                run = [b]
            else:
                run.append(b)
        if len(run) > 1:
            out.append(run)
    return out


def _write_lines(path, parts, label):
    path.parent.mkdir(parents=True, exist_ok=True)
    with shapefile.Writer(str(path), shapeType=shapefile.POLYLINE) as w:
        w.field("featurecla", "C", size=40)
        for part in parts:
            w.line([[list(c) for c in part]])
            w.record(label)
    path.with_suffix(".prj").write_text(WGS84_PRJ)
    path.with_suffix(".cpg").write_text("UTF-8")


def _write_polygons(path, geom, label):
    path.parent.mkdir(parents=True, exist_ok=True)
    with shapefile.Writer(str(path), shapeType=shapefile.POLYGON) as w:
        w.field("featurecla", "C", size=40)
        for poly in getattr(geom, "geoms", [geom]):
            # shapefile convention: outer ring clockwise
            poly = shapely.geometry.polygon.orient(poly, sign=-1.0)
            rings = [[[round(x, DIGITS), round(y, DIGITS)] for x, y in poly.exterior.coords]]
            rings += [[[round(x, DIGITS), round(y, DIGITS)] for x, y in r.coords]
                      for r in poly.interiors]
            w.poly(rings)
            w.record(label)
    path.with_suffix(".prj").write_text(WGS84_PRJ)
    path.with_suffix(".cpg").write_text("UTF-8")


def main(argv=None):
    """Read the countries, derive coastline, land and borders, write them; return 0."""
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("source", type=Path, help="folder holding naturalearth_lowres.shp")
    parser.add_argument("--out", type=Path, default=OUT, help=f"output folder (default {OUT})")
    args = parser.parse_args(argv)
    shp = args.source / "naturalearth_lowres.shp"
    if not shp.exists():
        sys.stderr.write(f"error: {shp}: not found; expected the naturalearth_lowres folder\n")
        return 2
    reader = shapefile.Reader(str(shp))
    countries = [shapely.make_valid(shape(s.__geo_interface__)) for s in reader.shapes()]
    # snap to the kept precision first, so land and coastline agree exactly and stay valid
    grid = 10.0 ** -DIGITS
    countries = [shapely.set_precision(c, grid) for c in countries]
    land = shapely.set_precision(shapely.union_all(countries), grid)
    coast = land.boundary
    all_edges = shapely.union_all([c.boundary for c in countries])
    borders = shapely.line_merge(all_edges.difference(coast.buffer(2.0 * grid)))
    coast = shapely.line_merge(coast)
    coast_parts = _clean_lines(coast)
    border_parts = [p for p in _clean_lines(borders)
                    if LineString(p).length > 1e-3]
    ne = args.out / "shapefiles" / "natural_earth"
    _write_lines(ne / "physical" / "ne_110m_coastline.shp", coast_parts, "Coastline")
    _write_lines(ne / "cultural" / "ne_110m_admin_0_boundary_lines_land.shp", border_parts,
                 "International boundary (verify)")
    _write_polygons(ne / "physical" / "ne_110m_land.shp", land, "Land")
    print(f"coastline: {len(coast_parts)} lines, {sum(len(p) for p in coast_parts)} points")
    print(f"borders:   {len(border_parts)} lines, {sum(len(p) for p in border_parts)} points")
    print(f"land:      {len(getattr(land, 'geoms', [land]))} polygons")
    print(f"written under {ne}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
