"""frontshift: objective fronts, sections and site arrivals from model runs.

The notebook user's whole API::

    import kit
    run = kit.open_run("sample_grids/demo_event/runs/...")   # CF NetCDF or GRIB
    analysis = kit.analyse(run)                              # find, type, track, speeds, slopes
    analysis.table()                                         # one row per front
    kit.arrival_table(analysis, kit.read_sites("sites.csv"))
    kit.section(analysis, site, "2031-02-03T06:00Z")

Every product of one shift is made from one :class:`Analysis`, so the map,
the sections and the arrival table show the same fronts.

Decision support only: the official forecast, local regulations and licensed or
authorised practice take precedence over anything this kit produces.
"""

# CAUTION comes first: every module of the kit imports it from here.
CAUTION = (
    "Decision support only: the official forecast, local regulations and "
    "licensed or authorised practice take precedence."
)

__version__ = "0.1.0"

from kit.errors import FrontshiftError, InputError, OutputError  # noqa: E402
from kit.io.runs import open_run, open_runs  # noqa: E402
from kit.io.sites import read_sites  # noqa: E402
from kit.model import Analysis, Front, Track  # noqa: E402
from kit.pipeline import analyse  # noqa: E402
from kit.products.arrivals import arrival_table  # noqa: E402
from kit.products.fronts import fronts_to_geojson  # noqa: E402
from kit.products.sections import section  # noqa: E402
from kit.science.fronts import FrontSettings  # noqa: E402

__all__ = [
    "CAUTION",
    "__version__",
    "FrontshiftError",
    "InputError",
    "OutputError",
    "open_run",
    "open_runs",
    "read_sites",
    "FrontSettings",
    "analyse",
    "Analysis",
    "Front",
    "Track",
    "arrival_table",
    "section",
    "fronts_to_geojson",
]
