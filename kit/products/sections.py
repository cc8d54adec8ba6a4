"""Cross-section products: through a site, across a front of the shift's analysis.

Decision support only: the official forecast, local regulations and licensed or
authorised practice take precedence.
"""

from __future__ import annotations

from kit.errors import InputError
from kit.model import Analysis
from kit.science.sections import section_for_site, select_time

__all__ = ["section"]


def section(analysis, site, time, *, front="nearest", length_km=1200.0, spacing_km=10.0,
            member=None):
    """Section through ``site`` across a front of ``analysis`` at valid time ``time``.

    Parameters
    ----------
    analysis : kit.model.Analysis
        The run's analysis (:func:`kit.pipeline.analyse`): its dataset, level
        and fronts are used as they are, so the section crosses the front the
        map and the arrival table show.
    site : dict or pandas row or (lat, lon)
        The site [degrees]; ``name`` labels it.
    time : str or datetime-like
        Valid time (UTC), within a minute of one of the run's.
    front : {"nearest", "warm", "cold", "quasi-stationary"}
        Which front to cut across.
    length_km, spacing_km : float
        Section length and point spacing [km].
    member : int, optional
        Ensemble member.

    Returns
    -------
    xarray.Dataset
        As :func:`kit.science.sections.section_for_site`.
    """
    if not isinstance(analysis, Analysis) or analysis.dataset is None:
        raise InputError(
            f"section: got {type(analysis).__name__}; expected a kit.model.Analysis made by "
            "kit.analyse(run)"
        )
    ds = analysis.dataset
    t = select_time(ds, time)
    fronts = [f for f in analysis.fronts if member is None or f.member in (None, member)]
    return section_for_site(ds, site, t, fronts=fronts, front=front, length_km=length_km,
                            spacing_km=spacing_km, level=analysis.level_hpa, member=member)
