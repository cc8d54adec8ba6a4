"""Figures in one briefing style: maps, cross-sections, site timelines, verification.

One module per product; importing this package is cheap, and a submodule is
imported on first use (``kit.charts.maps``, ``kit.charts.style``...). When a
graphics library is missing the import fails with one line that names what to
install, instead of a deep traceback.

Every figure carries the run, valid time, lead time, the data source and
:data:`kit.CAUTION` (see :func:`kit.charts.style.stamp`).
"""

import importlib

__all__ = ["maps", "sections", "style", "timelines", "verification"]

#: graphics packages each submodule needs: import name -> install hint
_NEEDS = {
    "style": ("matplotlib",),
    "maps": ("matplotlib", "cartopy", "metpy"),
    "sections": ("matplotlib",),
    "timelines": ("matplotlib",),
    "verification": ("matplotlib",),
}


def require_graphics(packages, what):
    for name in packages:
        try:
            importlib.import_module(name)
        except ImportError:
            raise ImportError(
                f"{what} needs the '{name}' package, which is not installed; install it "
                f"with 'pip install {name}' (or 'pip install frontshift' for every "
                "graphics dependency)"
            ) from None


def __getattr__(name):
    """Import a chart module on first use, with a one-line hint if graphics are missing."""
    if name in __all__:
        require_graphics(_NEEDS.get(name, ("matplotlib",)), f"kit.charts.{name}")
        return importlib.import_module(f"kit.charts.{name}")
    raise AttributeError(f"module 'kit.charts' has no attribute {name!r}")


def __dir__():
    return list(__all__)
