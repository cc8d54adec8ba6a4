"""frontshift: objective fronts, sections and site arrivals from CF NetCDF runs.

Decision support only: the official forecast, local regulations and licensed or
authorised practice take precedence over anything this kit produces.
"""

from kit.errors import FrontshiftError, InputError, OutputError

CAUTION = (
    "Decision support only: the official forecast, local regulations and "
    "licensed or authorised practice take precedence."
)

__version__ = "0.1.0"

__all__ = ["CAUTION", "FrontshiftError", "InputError", "OutputError", "open_run", "__version__"]


def open_run(*args, **kwargs):
    """Open one model run as the canonical Dataset; see :func:`kit.io.runs.open_run`."""
    from kit.io.runs import open_run as _open_run

    return _open_run(*args, **kwargs)
