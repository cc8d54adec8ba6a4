"""Notebook panels (ipywidgets): the logic behind the notebooks, which stay thin.

Each builder returns the top widget, with the controller object attached as
``widget.controller`` so code and tests can drive it (set a control's value,
then look at the images, tables and messages it updated).

- :func:`front_panel`: the frontal map through the run: run (or member) and
  valid-time slider with play, level and field, front-mask thresholds (K1,
  K2, smoothing, shortest line) with a button that restores the defaults, site
  and front pickers, a cross-section of the chosen front through the chosen
  site, and export buttons. The analysis is cached per (run, member, level,
  field, thresholds); moving the time slider only redraws the map, on a map
  frame (coastlines, graticule, key) that is built once.
- :func:`section_panel`: the same panel opened on its section view.
- :func:`arrivals_panel`: the arrival table of the runs and one site timeline.
- :func:`rerun_panel`: the verification of a past event.
- :func:`briefing_panel`: writes every shift product (``frontshift shift``).

Bad input (a wrong path, a threshold that is not a number) is shown as one
plain line in the panel's message area, never a traceback. Products are
written only through :mod:`kit.products.files` (new file names; an existing file is
never overwritten silently).
"""

import html
import io
import json
import re
import time
from pathlib import Path

import ipywidgets as widgets
import numpy as np
import pandas as pd
import xarray as xr

from kit import CAUTION
from kit.charts import maps, style
from kit.charts.sections import section_figure
from kit.charts.style import KIND_LABELS
from kit.charts.timelines import timeline_figure
from kit.charts.verification import position_error_figure, timing_error_figure
from kit.errors import FrontshiftError, InputError
from kit.io.runs import oldest_first, open_run
from kit.io.sites import check_sites_on_grid, read_sites
from kit.pipeline import analyse
from kit.products.arrivals import arrival_table, newest_run, people_table
from kit.products.files import save_figure, write_csv, write_html_table, write_json
from kit.products.fronts import fronts_to_geojson
from kit.products.shift import write_shift_products
from kit.science.fronts import FrontSettings, effective_smoothing_km, threshold_rule
from kit.science.sections import section_across_front
from kit.products.rerun import rerun_event
from kit.science.verification import summarise_position, summarise_timing

__all__ = [
    "FrontPanel",
    "front_panel",
    "section_panel",
    "arrivals_panel",
    "rerun_panel",
    "briefing_panel",
    "caution_banner",
    "figure_image",
    "K1_UNIT",
    "K2_UNIT",
]

#: display unit of K1: K (100 km)^-2 -> K m-2
K1_UNIT = 1e-10
#: display unit of K2: K (100 km)^-1 -> K m-1
K2_UNIT = 1e-5

_MSG_STYLE = {
    "info": "color:#1e2a33",
    "ok": "color:#2e6b2e",
    "error": "color:#a11d1d;font-weight:bold",
}


def caution_banner():
    """Return the caution as an HTML widget, shown at the top of every panel."""
    return widgets.HTML(
        f"<div style='color:#8a3b00;font-weight:bold;font-size:90%;"
        f"border-left:4px solid #8a3b00;padding:2px 8px'>{CAUTION}</div>"
    )


def figure_image(fig, dpi=80):
    """Show a kit figure in a notebook: an Image widget of the figure (PNG).

    Parameters
    ----------
    fig : matplotlib.figure.Figure
        A stamped kit figure (maps, sections, timelines...).
    dpi : int
        Resolution [dots per inch].

    Returns
    -------
    ipywidgets.Image
    """
    return widgets.Image(value=_png(fig, dpi), format="png",
                         layout=widgets.Layout(max_width="100%"))


def _plain(exc):
    """One plain line for any error (FrontshiftError messages are already one line)."""
    text = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
    if isinstance(exc, FrontshiftError):
        return text
    return f"unexpected problem ({type(exc).__name__}): {text}"


def _png(fig, dpi):
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=dpi)
    return buf.getvalue()


def _load_run(run):
    """Return a canonical Dataset from a Dataset or a RUN argument (file, glob, folder)."""
    if isinstance(run, xr.Dataset):
        return run
    if not isinstance(run, (str, Path)):
        raise InputError(f"run {run!r}: expected a path (file, glob or folder) or a Dataset")

    return open_run(str(run))


def _load_sites(sites):
    if sites is None:
        return pd.DataFrame(columns=["name", "lat", "lon", "elevation_m"])
    if isinstance(sites, pd.DataFrame):
        return sites

    return read_sites(sites)


def _float(widget, what, lo=0.0):
    """Read a text box's value as a finite number >= lo, or a one-line InputError."""
    raw = str(widget.value).strip()
    try:
        value = float(raw)
    except ValueError:
        raise InputError(f"{what} '{raw}': not a number; expected a number >= {lo:g}") from None
    if not np.isfinite(value) or value < lo:
        raise InputError(f"{what} {raw}: out of range; expected a finite number >= {lo:g}")
    return value


class FrontPanel:
    """The frontal-map panel's state, controls and drawing (see :func:`front_panel`).

    Parameters
    ----------
    runs : list of (str, Path or xarray.Dataset), optional
        Runs to offer (RUN paths are opened with :func:`kit.io.runs.open_run`).
    sites : str, Path or pandas.DataFrame, optional
        Site list (CSV path or :func:`kit.io.sites.read_sites` frame).
    level : float
        Initial front level [hPa].
    field : {"theta_w", "theta"}
        Initial thermal field.
    out_dir : str or Path
        Folder the export buttons write into (created when needed).
    width_in : float
        Map width [inches].
    dpi : int
        Resolution of the images in the panel [dots per inch].
    """

    def __init__(self, runs=None, sites=None, *, level=850.0, field="theta_w",
                 out_dir="products", width_in=9.0, dpi=80):
        self.defaults = FrontSettings(field=field)
        self.runs, self.labels = [], []
        self.sites = _load_sites(sites)
        self.out_dir = Path(out_dir)
        self.width_in, self.dpi = width_in, dpi
        self._analysis = {}     # (run, member, level, field, thresholds) -> fronts
        self._levels = {}       # (run, member, level, field) -> shading levels
        self._frames = {}       # (run, member, level, field) -> maps.MapSeries
        self.stats = {"analyses": 0, "map_draws": 0, "section_draws": 0, "last_redraw_s": None}
        self._quiet = True
        self._section_fig = None
        self._build_controls(level, field)
        self._quiet = False
        for run in runs or []:
            self._guard(lambda run=run: self.add_run(run))
        if self.runs:
            self._guard(self._refresh_choices)
            self._guard(self.redraw)

    # --- controls ------------------------------------------------------------------------
    def _build_controls(self, level, field):
        lay = widgets.Layout
        self.message = widgets.HTML(value="")
        self.path_text = widgets.Text(placeholder="RUN: GRIB or NetCDF file, glob or folder",
                                      description="Open run", layout=lay(width="60%"))
        self.open_button = widgets.Button(description="Open", icon="folder-open",
                                          tooltip="open the run typed on the left")
        self.run_pick = widgets.Dropdown(description="Run", options=[], layout=lay(width="34%"))
        self.time_slider = widgets.SelectionSlider(options=["-"], description="Valid",
                                                   continuous_update=False,
                                                   layout=lay(width="62%"))
        self.play = widgets.Play(interval=1200, step=1, description="play through the run")
        self.level_pick = widgets.Dropdown(description="Level", options=[level], value=level,
                                           layout=lay(width="22%"))
        self.field_pick = widgets.ToggleButtons(options=[("\u03b8w", "theta_w"),
                                                         ("\u03b8", "theta")], value=field,
                                                tooltips=["wet-bulb potential temperature",
                                                          "potential temperature"])
        self.k1_text = widgets.Text(description="K1", layout=lay(width="19%"),
                                    tooltip="TFP mask [K per (100 km)^2]")
        self.k2_text = widgets.Text(description="K2", layout=lay(width="19%"),
                                    tooltip="gradient mask [K per 100 km]")
        self.smooth_text = widgets.Text(description="Smooth km", layout=lay(width="22%"),
                                        value=f"{self.defaults.smoothing_km:g}")
        self.minlen_text = widgets.Text(description="Min km", layout=lay(width="19%"),
                                        value=f"{self.defaults.min_length_km:g}")
        self.apply_button = widgets.Button(description="Apply", icon="check",
                                           tooltip="find the fronts with these thresholds")
        self.restore_button = widgets.Button(description="Restore defaults", icon="undo",
                                             layout=lay(width="auto", min_width="150px"))
        self.units_note = widgets.HTML(
            "<span style='font-size:85%;color:#5d6b75'>front masks: K1 [K (100 km)<sup>-2</sup>]"
            " on the thermal front parameter, K2 [K (100 km)<sup>-1</sup>] on the gradient; "
            "smoothing and shortest line [km]</span>")
        self.site_pick = widgets.Dropdown(description="Site", options=[("(none)", None)],
                                          layout=lay(width="34%"))
        self.front_pick = widgets.Dropdown(description="Front", options=[("(none)", None)],
                                           layout=lay(width="40%"))
        self.section_button = widgets.Button(description="Section", icon="area-chart",
                                             tooltip="cross-section of the front through the site")
        self.save_map_button = widgets.Button(description="Save map", icon="save")
        self.save_section_button = widgets.Button(description="Save section", icon="save")
        self.save_fronts_button = widgets.Button(description="Save fronts", icon="save",
                                                 tooltip="GeoJSON of the run's fronts")
        self.map_image = widgets.Image(format="png", layout=lay(max_width="100%"))
        self.section_image = widgets.Image(format="png", layout=lay(max_width="100%"))
        # shown until a section is drawn (an empty image widget shows as a broken image)
        self.section_hint = widgets.HTML(
            "<span style='color:#5d6b75'>Pick a site and a front, then press Section.</span>")
        widgets.jslink((self.play, "value"), (self.time_slider, "index"))
        self._k_defaults_shown = False

        self.open_button.on_click(lambda _b: self._guard(self._open_typed))
        self.run_pick.observe(lambda _c: self._guard(self._on_run), names="value")
        self.time_slider.observe(lambda _c: self._guard(self.redraw), names="value")
        self.level_pick.observe(lambda _c: self._guard(self._on_level), names="value")
        self.field_pick.observe(lambda _c: self._guard(self._on_field), names="value")
        self.apply_button.on_click(lambda _b: self._guard(self._on_thresholds))
        for box in (self.k1_text, self.k2_text, self.smooth_text, self.minlen_text):
            box.continuous_update = False
            box.observe(lambda _c: self._guard(self._on_thresholds), names="value")
        self.restore_button.on_click(lambda _b: self._guard(self.restore_defaults))
        self.site_pick.observe(lambda _c: self._guard(self._on_site), names="value")
        self.section_button.on_click(lambda _b: self._guard(self.draw_section))
        self.save_map_button.on_click(lambda _b: self._guard(self.save_map))
        self.save_section_button.on_click(lambda _b: self._guard(self.save_section))
        self.save_fronts_button.on_click(lambda _b: self._guard(self.save_fronts))

        self.map_tab = widgets.VBox([self.map_image])
        self.section_controls = widgets.HBox([self.site_pick, self.front_pick,
                                              self.section_button])
        self.section_tab = widgets.VBox([self.section_controls, self.section_hint])
        self.views = widgets.Tab(children=[self.map_tab, self.section_tab])
        self.views.set_title(0, "Map")
        self.views.set_title(1, "Section")
        # the map comes first (above the fold at 1400 x 1000); the front-finding
        # thresholds are an advanced setting, folded away under the views
        self.thresholds = widgets.VBox([
            widgets.HBox([self.k1_text, self.k2_text, self.smooth_text, self.minlen_text]),
            widgets.HBox([self.apply_button, self.restore_button]),
            self.units_note,
        ])
        self.advanced = widgets.Accordion(children=[self.thresholds], selected_index=None)
        self.advanced.set_title(0, "Advanced: front-finding thresholds")
        self.widget = widgets.VBox([
            caution_banner(),
            widgets.HBox([self.path_text, self.open_button]),
            widgets.HBox([self.run_pick, self.level_pick, self.field_pick]),
            widgets.HBox([self.play, self.time_slider]),
            self.message,
            self.views,
            widgets.HBox([self.save_map_button, self.save_section_button,
                          self.save_fronts_button]),
            self.advanced,
        ])
        self.widget.controller = self

    def _guard(self, func):
        """Run a callback; show any problem as one plain line, never a traceback."""
        if self._quiet:
            return None
        try:
            result = func()
        except Exception as exc:  # noqa: BLE001 - the panel must never show a traceback
            self.say(_plain(exc), "error")
            return None
        return result

    def say(self, text, kind="info"):
        """Show one line in the panel's message area."""
        self.message.value = f"<span style='{_MSG_STYLE[kind]}'>{html.escape(text)}</span>"

    # --- runs ----------------------------------------------------------------------------
    def add_run(self, run):
        """Open a run (path or Dataset) and offer it in the run picker; return its label."""
        ds = _load_run(run)

        if len(self.sites):
            check_sites_on_grid(self.sites, ds)
        label = str(ds.attrs.get("run") or f"run {len(self.runs) + 1}")
        if label in self.labels:
            label = f"{label} ({len(self.runs) + 1})"
        self.runs.append(ds)
        self.labels.append(label)
        options = []
        for i, (lab, d) in enumerate(zip(self.labels, self.runs, strict=True)):
            if "member" in d.dims:
                options += [(f"{lab} member {int(m)}", (i, int(m)))
                            for m in np.atleast_1d(d["member"].values)]
            else:
                options.append((lab, (i, None)))
        quiet, self._quiet = self._quiet, True
        self.run_pick.options = options
        # the newest run (latest reference time, as everywhere in the kit) is shown
        self.run_pick.value = next(v for _t, v in options if v[0] == self._newest_index())
        self._quiet = quiet
        return label

    def _newest_index(self):
        """Index of the run with the latest reference time (the last added among equals)."""
        return oldest_first(self.runs)[-1]

    def _open_typed(self):
        path = self.path_text.value.strip()
        if not path:
            raise InputError("Open run: no path typed; expected a NetCDF file, glob or folder")
        label = self.add_run(path)
        self._quiet = True
        self.run_pick.value = next(v for t, v in self.run_pick.options if t.startswith(label))
        self._quiet = False
        self._refresh_choices()
        self.redraw()
        self.say(f"opened run {label}", "ok")

    @property
    def current(self):
        """(dataset, run label, member) of the run picked."""
        if not self.runs or self.run_pick.value is None:
            raise InputError("no run open; expected a run path in 'Open run'")
        i, member = self.run_pick.value
        return self.runs[i], self.labels[i], member

    def _refresh_choices(self):
        """Levels and times of the run picked, keeping the current ones where possible."""
        ds, _, _ = self.current
        quiet, self._quiet = self._quiet, True
        levels = [float(v) for v in np.atleast_1d(ds["level"].values)]
        keep_level = self.level_pick.value if self.level_pick.value in levels else (
            850.0 if 850.0 in levels else levels[0])
        self.level_pick.options = levels
        self.level_pick.value = keep_level
        old = self.time_slider.value
        times = [pd.Timestamp(t) for t in np.atleast_1d(ds["time"].values)]
        options = [(f"{t:%a %d %H:%M} UTC", t) for t in times]
        self.time_slider.options = options
        self.time_slider.value = old if old in times else times[0]
        self.play.max = len(times) - 1
        if "td" not in ds and self.field_pick.value == "theta_w":
            # a thin run without humidity on its levels: theta, and the panel says so
            self.field_pick.value = "theta"
        self._quiet = quiet
        if not self.k1_text.value.strip() and not self.k2_text.value.strip():
            self._show_default_thresholds()

    # --- analysis (cached) -------------------------------------------------------------------
    def settings(self):
        """FrontSettings from the threshold boxes (one-line InputError on bad values)."""
        smoothing = _float(self.smooth_text, "smoothing [km]", lo=0.0)
        min_len = _float(self.minlen_text, "shortest line [km]", lo=0.0)
        # an empty box: the kit's rule (published values, or quantiles on coarse grids)
        k1 = (_float(self.k1_text, "K1 [K per (100 km)^2]", lo=0.0) * K1_UNIT
              if self.k1_text.value.strip() else None)
        k2 = (_float(self.k2_text, "K2 [K per 100 km]", lo=0.0) * K2_UNIT
              if self.k2_text.value.strip() else None)
        return FrontSettings(field=self.field_pick.value, smoothing_km=smoothing,
                             min_length_km=min_len, k1=k1, k2=k2)

    def _show_default_thresholds(self):
        """Fill K1/K2 with the defaults for the smoothing typed (on this grid)."""
        ds, _, _ = self.current
        try:
            smoothing = float(self.smooth_text.value)
        except ValueError:
            smoothing = self.defaults.smoothing_km
        eff = effective_smoothing_km(ds, FrontSettings(smoothing_km=max(smoothing, 0.0)))
        rule, k1, k2, _, _ = threshold_rule(eff, FrontSettings())
        quiet, self._quiet = self._quiet, True
        if rule == "published":
            self.k1_text.value = f"{k1 / K1_UNIT:.3g}"
            self.k2_text.value = f"{k2 / K2_UNIT:.3g}"
        else:  # coarse grid: quantiles of the run, left to the kit (boxes empty)
            self.k1_text.value = self.k2_text.value = ""
            self.k1_text.placeholder = self.k2_text.placeholder = "quantile"
        self._quiet = quiet

    def analysis(self):
        """Return the Analysis of the run picked with the current choices (cached)."""
        ds, label, member = self.current
        s = self.settings()
        key = (label, member, float(self.level_pick.value), s.field, s.k1, s.k2,
               s.smoothing_km, s.min_length_km)
        if key not in self._analysis:
            self._analysis[key] = analyse(ds, level=float(self.level_pick.value),
                                          settings=s, member=member)
            self.stats["analyses"] += 1
        return self._analysis[key]

    def fronts(self):
        """Fronts of the run picked with the current choices (from :meth:`analysis`)."""
        return list(self.analysis().fronts)

    def _shading_levels(self, ds, label, member, level, field):
        key = (label, member, level, field)
        if key not in self._levels:
            fields = [maps.level_field_c(maps.select_time(ds, t, member=member)[0], field, level)
                      for t in np.atleast_1d(ds["time"].values)]
            self._levels[key] = style.thetaw_levels(np.concatenate([f.ravel() for f in fields]))
        return self._levels[key]

    # --- drawing -------------------------------------------------------------------------
    def redraw(self):
        """Redraw the map for the time picked (the analysis comes from the cache)."""
        started = time.perf_counter()
        ds, label, member = self.current
        level = float(self.level_pick.value)
        field = self.field_pick.value
        fronts = self.fronts()
        valid = np.datetime64(self.time_slider.value, "ns")
        ds_t, valid = maps.select_time(ds, valid, member=member)
        key = (label, member, level, field)
        if key not in self._frames:
            self._frames[key] = maps.MapSeries(
                ds, sites=self.sites, level=level, field=field, member=member,
                levels=self._shading_levels(ds, label, member, level, field),
                width_in=self.width_in, dpi=self.dpi)
        frame = self._frames[key]
        at_time = maps.fronts_at(fronts, valid, level, member)
        site = self._site()
        self.map_image.value = frame.draw(valid, at_time, site=site, run=label)
        self._fill_front_pick(at_time)
        self.stats["map_draws"] += 1
        self.stats["last_redraw_s"] = time.perf_counter() - started
        thin = ds.attrs.get("thin")
        self.say(f"{label}: {len(at_time)} fronts at {pd.Timestamp(valid):%d %b %H:%M} UTC "
                 f"({self.stats['last_redraw_s']:.2f} s)" + (f"; thin run: {thin}" if thin else ""))
        return self.map_image.value

    def _site(self):
        name = self.site_pick.value
        if name is None or not len(self.sites):
            return None
        return self.sites[self.sites["name"] == name].iloc[0]

    def _fill_front_pick(self, fronts):
        keep = self.front_pick.value
        options = [("(none)", None)]
        for k, f in enumerate(fronts):
            tid = f"#{f.track} " if f.track is not None else ""
            options.append((f"{tid}{KIND_LABELS[f.kind]}, {f.length_km:.0f} km", k))
        quiet, self._quiet = self._quiet, True
        self.front_pick.options = options
        values = [v for _, v in options]
        self.front_pick.value = keep if (keep is not None and keep in values) else (
            values[1] if len(values) > 1 else None)
        self._quiet = quiet
        self._fronts_shown = list(fronts)
        names = [("(none)", None)] + [(n, n) for n in self.sites["name"]]
        if list(self.site_pick.options) != names:
            quiet, self._quiet = self._quiet, True
            current = self.site_pick.value
            self.site_pick.options = names
            self.site_pick.value = current if current in [v for _, v in names] else None
            self._quiet = quiet

    def draw_section(self):
        """Cross-section of the front picked through the site picked (or its middle)."""
        ds, _, _ = self.current
        k = self.front_pick.value
        if k is None or not getattr(self, "_fronts_shown", None):
            raise InputError("Section: no front picked; expected a front at this valid time")
        front = self._fronts_shown[k]
        site = self._site()
        sec = section_across_front(ds, front, site)
        if self._section_fig is not None:
            self._section_fig.clear()
        self._section_fig = section_figure(sec)
        self.section_image.value = _png(self._section_fig, self.dpi)
        self.section_tab.children = [self.section_controls, self.section_image]
        self.stats["section_draws"] += 1
        self.views.selected_index = 1
        where = f" through {site['name']}" if site is not None else ""
        self.say(f"section across the {front.kind} front{where}", "ok")
        return self.section_image.value

    # --- events --------------------------------------------------------------------------
    def _on_run(self):
        self._refresh_choices()
        self.redraw()

    def _on_level(self):
        self.redraw()

    def _on_field(self):
        self.redraw()

    def _on_site(self):
        self.redraw()

    def _on_thresholds(self):
        self.settings()  # validate first: a bad value is one message, nothing redrawn
        self.redraw()

    def restore_defaults(self):
        """Put back the default smoothing, shortest line and the K1/K2 for them."""
        quiet, self._quiet = self._quiet, True
        self.smooth_text.value = f"{self.defaults.smoothing_km:g}"
        self.minlen_text.value = f"{self.defaults.min_length_km:g}"
        self._quiet = quiet
        self._show_default_thresholds()
        self.redraw()
        self.say("default thresholds restored", "ok")

    # --- exports (never overwriting) -------------------------------------------------------
    def _product_path(self, stem, suffix):
        self.out_dir.mkdir(parents=True, exist_ok=True)
        for n in range(1, 1000):
            cand = self.out_dir / (f"{stem}{suffix}" if n == 1 else f"{stem}-{n}{suffix}")
            if not cand.exists():
                return cand
        raise InputError(f"{self.out_dir}: too many files named {stem}; clean up the folder")

    def save_map(self):
        """Write the map shown as PNG into the export folder (new name); return the Path."""
        ds, label, member = self.current
        self.redraw()
        frame = self._frames[(label, member, float(self.level_pick.value),
                              self.field_pick.value)]
        t = pd.Timestamp(self.time_slider.value)
        stem = f"map_{_slug(label)}_{t:%Y%m%dT%H%MZ}_{float(self.level_pick.value):g}hPa"
        path = save_figure(frame.fig, self._product_path(stem, ".png"))
        self.say(f"map saved: {path}", "ok")
        return path

    def save_section(self):
        """Write the section shown as PNG (new name); return the Path."""
        if self._section_fig is None:
            raise InputError("Save section: no section drawn yet; pick a front and press Section")
        _, label, _ = self.current
        site = self.site_pick.value or "front"
        path = save_figure(self._section_fig,
                           self._product_path(f"section_{_slug(label)}_{_slug(site)}", ".png"))
        self.say(f"section saved: {path}", "ok")
        return path

    def save_fronts(self):
        """Write the run's fronts (all times) as GeoJSON (new name); return the Path."""
        _, label, _ = self.current
        collection = fronts_to_geojson(self.fronts())
        collection["properties"] = {"product": "frontshift panel: fronts", "run": label,
                                    "level_hpa": float(self.level_pick.value),
                                    "caution": CAUTION}
        path = write_json(self._product_path(f"fronts_{_slug(label)}", ".geojson"), collection)
        self.say(f"fronts saved: {path}", "ok")
        return path


def _slug(text):
    return re.sub(r"[^A-Za-z0-9_.-]+", "_", str(text)).strip("_") or "x"


def front_panel(runs=None, sites=None, **kwargs):
    """Build the frontal-map panel; return its widget (``widget.controller`` drives it).

    Parameters
    ----------
    runs : list of str, Path or xarray.Dataset, optional
        Runs to open (RUN: a NetCDF file, glob or folder of one run).
    sites : str, Path or pandas.DataFrame, optional
        Site list.
    **kwargs
        Passed to :class:`FrontPanel` (level, field, out_dir, width_in, dpi).

    Returns
    -------
    ipywidgets.VBox
    """
    panel = FrontPanel(runs, sites, **kwargs)
    return panel.widget


def section_panel(runs=None, sites=None, *, site=None, **kwargs):
    """Build the frontal panel opened on its cross-section view.

    The first front at the first valid time is cut through ``site`` (or the
    first site) straight away.

    Returns
    -------
    ipywidgets.VBox
    """
    panel = FrontPanel(runs, sites, **kwargs)
    names = [v for _, v in panel.site_pick.options if v is not None]
    panel.views.selected_index = 1
    if site is not None and site not in names:
        # never a section through another site shown as if it were the one asked for
        panel.say(f"site {site!r}: not in the site list; expected one of "
                  f"{', '.join(map(str, names)) or '(no sites loaded)'}", "error")
        return panel.widget
    if names:
        panel.site_pick.value = site if site is not None else names[0]
    if panel.runs and panel.front_pick.value is not None:
        panel._guard(panel.draw_section)
    return panel.widget


class _ArrivalsPanel:
    """Arrival table of the runs and one site's timeline."""

    def __init__(self, runs, sites, *, level=850.0, out_dir="products", dpi=80):
        self.out_dir = Path(out_dir)
        self.dpi = dpi
        self.message = widgets.HTML()
        self.runs, self.labels, self.series = [], [], {}
        self.table = pd.DataFrame()
        self.sites = pd.DataFrame(columns=["name", "lat", "lon"])
        self.site_pick = widgets.Dropdown(description="Site", options=[])
        self.run_pick = widgets.Dropdown(description="Run", options=[])
        self.table_html = widgets.HTML()
        self.timeline_image = widgets.Image(format="png")
        self.save_button = widgets.Button(description="Save table", icon="save",
                                          tooltip="CSV and HTML, new names")
        self.site_pick.observe(lambda _c: self._guard(self.show), names="value")
        self.run_pick.observe(lambda _c: self._guard(self.show), names="value")
        self.save_button.on_click(lambda _b: self._guard(self.save))
        self.widget = widgets.VBox([
            caution_banner(), widgets.HBox([self.site_pick, self.run_pick, self.save_button]),
            self.message, self.table_html, self.timeline_image,
        ])
        self.widget.controller = self
        # a bad run path or site file is one message in the panel, never a traceback
        if self._guard(lambda: self._load(runs, sites, level)):
            self._guard(self.show)

    _guard = FrontPanel._guard
    say = FrontPanel.say
    _quiet = False

    def _load(self, runs, sites, level):
        self.sites = _load_sites(sites)
        self.runs = [_load_run(r) for r in runs]
        if not self.runs:
            raise InputError("arrivals panel: no runs given; expected one or more RUN paths")
        self.analyses = [analyse(ds, level=level) for ds in self.runs]
        self.table, self.series = arrival_table(self.analyses, self.sites, return_series=True)
        self.labels = [str(ds.attrs.get("run")) for ds in self.runs]
        self._quiet = True
        names = list(self.sites["name"])
        if not names:
            raise InputError("arrivals panel: the site list is empty; expected name,lat,lon rows")
        self.site_pick.options = names
        self.site_pick.value = names[0]
        self.run_pick.options = self.labels
        self.run_pick.value = self.labels[-1]
        self._quiet = False
        return True

    def show(self):
        """Show the picked site's rows and its timeline for the picked run."""
        name = self.site_pick.value
        rows = self.table[self.table["site"] == name]
        # the people's table of every product (ft, kt, day/hour Z; the newest run marked)
        shown = people_table(rows, newest=newest_run(self.table))
        shown = shown[[c for c in shown.columns if (shown[c] != "").any()]]
        self.table_html.value = shown.to_html(index=False, border=0, escape=True)
        key = next((k for k in self.series if k[0] == self.run_pick.value and k[2] == name),
                   None)
        if key is None:
            raise InputError(f"site {name}: no series for run {self.run_pick.value}")
        fig = timeline_figure(self.series[key], rows)
        self.timeline_image.value = _png(fig, self.dpi)
        n = int((rows["passage_utc"] != "").sum())
        self.say(f"{name}: {n} front passage(s) over {len(self.runs)} run(s)")

    def save(self):
        """Write the whole arrival table as CSV and HTML (new names); return the Paths."""
        self.out_dir.mkdir(parents=True, exist_ok=True)
        stem = f"arrivals_{_slug(self.labels[-1])}"
        paths = []
        for suffix in (".csv", ".html"):
            n = 1
            while (self.out_dir / (f"{stem}{suffix}" if n == 1 else f"{stem}-{n}{suffix}")
                   ).exists():
                n += 1
            paths.append(self.out_dir / (f"{stem}{suffix}" if n == 1 else f"{stem}-{n}{suffix}"))
        frame = self.table.copy()
        frame["caution"] = CAUTION
        write_csv(paths[0], frame)
        write_html_table(paths[1], self.table, f"Front arrivals: runs {', '.join(self.labels)}",
                         CAUTION)
        self.say(f"saved {paths[0].name} and {paths[1].name} in {self.out_dir}", "ok")
        return paths


def arrivals_panel(runs, sites, **kwargs):
    """Build the arrival-table panel (site picker, table rows, timeline); return the widget."""
    return _ArrivalsPanel(runs, sites, **kwargs).widget


class _RerunPanel:
    """Verification of a past event folder (runs/, analyses/, stations/, sites.csv)."""

    def __init__(self, event_dir, *, level=850.0, dpi=80):
        self.event_dir = Path(event_dir)
        self.level, self.dpi = level, dpi
        self.message = widgets.HTML()
        self.summary_html = widgets.HTML()
        self.timing_image = widgets.Image(format="png")
        self.position_image = widgets.Image(format="png")
        self.path_text = widgets.Text(value=str(event_dir), description="Event",
                                      layout=widgets.Layout(width="70%"))
        self.run_button = widgets.Button(description="Verify", icon="play")
        self.run_button.on_click(lambda _b: self._guard(self.verify))
        self.widget = widgets.VBox([
            caution_banner(), widgets.HBox([self.path_text, self.run_button]), self.message,
            self.summary_html, widgets.HBox([self.timing_image, self.position_image]),
        ])
        self.widget.controller = self
        self.result = None
        self._guard(self.verify)

    _guard = FrontPanel._guard
    say = FrontPanel.say
    _quiet = False

    def verify(self):
        """Rerun the event and show the error summaries and figures."""
        event = Path(self.path_text.value.strip())
        if not event.is_dir():
            raise InputError(f"{event}: no such event folder; expected runs/, analyses/, "
                             "stations/ and sites.csv inside")
        res = rerun_event(event, level=self.level)
        self.result = res
        t_sum, p_sum = summarise_timing(res["timing"]), summarise_position(res["position"])
        self.summary_html.value = (
            "<b>Passage timing errors [h]</b>" + t_sum.to_html(index=False, na_rep="", border=0)
            + "<b>Position errors [km]</b>" + p_sum.to_html(index=False, na_rep="", border=0))
        source = f"rerun of {event.name}: forecast runs vs station series and analyses"
        self.timing_image.value = _png(timing_error_figure(res["timing"], title_run=event.name,
                                                           source=source), self.dpi)
        self.position_image.value = _png(position_error_figure(
            res["position"], title_run=event.name, source=source), self.dpi)
        self.say(f"{event.name}: {len(res['timing'])} timing pairs, "
                 f"{len(res['position'])} position pairs", "ok")
        return res


def rerun_panel(event_dir, **kwargs):
    """Build the event-verification panel; return the widget."""
    return _RerunPanel(event_dir, **kwargs).widget


class _BriefingPanel:
    """Write every shift product (the ``frontshift shift`` set) from the notebook."""

    def __init__(self, runs, sites, *, out_dir="products", maps_every_h=6.0):
        self.runs = [str(r) for r in runs]
        self.sites = str(sites)
        self.message = widgets.HTML()
        self.out_text = widgets.Text(value=str(out_dir), description="Out folder")
        self.every = widgets.Dropdown(description="Maps every", options=[
            ("3 h", 3.0), ("6 h", 6.0), ("12 h", 12.0)], value=maps_every_h)
        self.write_button = widgets.Button(description="Write products", icon="file-pdf-o",
                                           button_style="primary")
        self.files_html = widgets.HTML()
        self.write_button.on_click(lambda _b: self._guard(self.write))
        self.widget = widgets.VBox([
            caution_banner(), widgets.HBox([self.out_text, self.every, self.write_button]),
            self.message, self.files_html,
        ])
        self.widget.controller = self
        self.folder = None

    _guard = FrontPanel._guard
    say = FrontPanel.say
    _quiet = False

    def write(self):
        """Write the products into a new sub-folder; list them; return the folder."""
        self.say("writing the shift products...")
        folder = write_shift_products(self.runs, self.sites, self.out_text.value.strip(),
                                      maps_every_h=float(self.every.value), progress=False)
        manifest = json.loads((folder / "manifest.json").read_text())
        rows = "".join(f"<li>{html.escape(f['path'])}: {html.escape(f['description'])}</li>"
                       for f in manifest["files"])
        self.files_html.value = f"<ul>{rows}</ul>"
        self.folder = folder
        self.say(f"{len(manifest['files'])} products written to {folder}", "ok")
        return folder

    def written(self):
        """Return the folder of this panel's last write, writing once if nothing was yet.

        For the notebook's own cell: "Run all" writes one set, and a press of
        *Write products* before or after writes one more, never two per action.
        """
        if self.folder is not None:
            self.say(f"products already written to {self.folder} (press Write products "
                     "for a new set)", "ok")
            return self.folder
        return self.write()


def briefing_panel(runs, sites, **kwargs):
    """Build the panel that writes the briefing pack and every shift product."""
    return _BriefingPanel(runs, sites, **kwargs).widget
