"""Every shift product of one or more runs, from one analysis per run, into a new folder.

Writes into a NEW sub-folder of DIR (``shift_<newest run>``, then ``-2``, ``-3``
...), so earlier products are never overwritten:

- ``fronts.geojson``: every front of every run (RFC 7946, caution in properties);
- ``fronts.csv``: one row per front (kind, valid time, level, length, speeds,
  track, run, member, slopes...);
- ``maps/``: a frontal map per valid time (every ``--maps-every-h`` hours) of
  each run, the run's fronts through time (small multiples) and the overview
  coloured by lead time;
- ``sections/``: a cross-section through each site across each front that
  passes it, at the valid time nearest the passage (newest run);
- ``arrivals.csv`` and ``arrivals.html``: the arrival table of every run;
  ``timelines/``: one site timeline per site (newest run);
- ``briefing_pack.pdf``: cover, overview, maps, sections, arrival table and
  timelines, the caution on every page;
- ``manifest.json`` and ``index.html``: the list of files (size, checksum,
  what each is) and the caution.

A thin run (``ds.attrs["thin"]``: no humidity, wind or mean-sea-level pressure
on its levels) gets every product it can carry, each saying what the run lacks
and what was done instead (figure headers, the ``thin_run`` columns of the
tables, the cover, the GeoJSON properties, ``manifest["thin"]``); maps and
fronts are in theta where the run has no humidity. A product the run cannot
carry (cross-sections from fewer than three levels) is left out and listed,
with the reason, in ``manifest["skipped"]``, the summary and the index page.

The set is built in a hidden ``.incomplete_...`` folder and renamed when
complete, so a folder named ``shift_...`` always holds a whole set. Earlier
folders are never touched: an interrupted run (Ctrl-C) keeps its partial
products in the hidden folder (reported on stderr); a failed one (a full disk,
unusable data) removes it and reports one error line. A progress bar goes to stderr; the
finished folder is printed on stdout.
"""

import hashlib
import html
import os
import re
import shutil
import sys
import time
from pathlib import Path

import numpy as np
import pandas as pd
from tqdm import tqdm

from kit import CAUTION, __version__
from kit.charts import maps
from kit.charts.sections import section_figure
from kit.charts.style import source_text
from kit.charts.timelines import timeline_figure
from kit.errors import InputError, OutputError
from kit.io.runs import oldest_first, open_run
from kit.io.sites import check_sites_on_grid, read_sites
from kit.model import fronts_table
from kit.pipeline import analyse
from kit.products.arrivals import (
    arrival_table,
    day_hour,
    people_table,
    site_lines,
    summary_table,
    thin_notes,
)
from kit.products.briefing import BriefingPack, cover_figure, summary_figures, table_figures
from kit.products.files import (
    new_product_dir,
    save_figure,
    write_bytes,
    write_csv,
    write_json,
    write_text,
)
from kit.products.fronts import (
    fronts_to_geojson,
    plausibility,
    plausibility_metadata,
    plausibility_notes,
)
from kit.science.fronts import FrontSettings
from kit.science.sections import check_section_levels, section_across_front
from kit.timefmt import iso_seconds

__all__ = ["write_shift_products", "PRODUCT_KINDS"]

#: what each product kind is, for the manifest and index page
PRODUCT_KINDS = {
    "fronts_geojson": "Fronts of every run (GeoJSON LineStrings, RFC 7946)",
    "fronts_csv": "One row per front: kind, valid time, length, speeds, track, slope",
    "map": "Frontal map at one valid time",
    "through_run": "Fronts through the run (small multiples)",
    "overview": "Front lines through the run, coloured by lead time",
    "section": "Cross-section through a site across a front",
    "summary_html": "Briefing summary: passages, spread and hazards per site (newest run)",
    "arrivals_csv": "Front arrivals per site (CSV: every column, SI and original units)",
    "arrivals_html": "Front arrivals per site (HTML table for people: ft, kt, day/hour Z)",
    "timeline": "Site timeline with front passages",
    "pack": "Briefing pack (PDF)",
    "manifest": "This list of products (JSON)",
}


def _slug(text):
    return re.sub(r"[^A-Za-z0-9_.-]+", "_", str(text)).strip("_") or "x"


def _lead_h(ds, t):
    if "reference_time" not in ds.coords:
        return None
    ref = np.datetime64(ds["reference_time"].values, "ns")
    return float((np.datetime64(t, "ns") - ref) / np.timedelta64(1, "h"))


def _scalar_columns(frame):
    """Drop columns holding lists/arrays (per-vertex values) for a flat CSV."""
    keep = []
    for col in frame.columns:
        values = frame[col].dropna()
        if len(values) and values.map(lambda v: isinstance(v, (list, tuple, np.ndarray,
                                                                dict))).any():
            continue
        keep.append(col)
    out = frame[keep].copy()
    out.attrs = dict(frame.attrs)
    return out


class _Products:
    """Book-keeping of the files written into the product folder."""

    def __init__(self, folder, bar):
        self.folder = Path(folder)
        self.bar = bar
        self.files = []

    def add(self, path, kind, **info):
        path = Path(path)
        data = path.read_bytes()
        self.files.append({
            "path": path.relative_to(self.folder).as_posix(),
            "kind": kind,
            "description": PRODUCT_KINDS.get(kind, kind),
            "bytes": len(data),
            "sha256": hashlib.sha256(data).hexdigest(),
            **info,
        })
        self.bar.update(1)
        return path

    def figure(self, fig, rel, kind, pack=None, **info):
        path = save_figure(fig, self.folder / rel)
        if pack is not None:
            pack.add_figure(fig, title=kind)
        self.add(path, kind, **info)
        fig.clear()
        return path


def _load(run_args, sites_path):
    sites = read_sites(sites_path)
    runs = []
    for arg in run_args:
        ds = open_run(arg)
        check_sites_on_grid(sites, ds)
        runs.append(ds)
    # newest run last (by reference time), as the briefing reads them
    runs = [runs[i] for i in oldest_first(runs)]
    labels = [str(ds.attrs.get("run") or f"run{i + 1}") for i, ds in enumerate(runs)]
    if len(set(labels)) != len(labels):
        raise InputError(
            "RUN arguments: two runs share the label "
            f"{next(x for x in labels if labels.count(x) > 1)}; expected different runs"
        )
    return runs, labels, sites


def _analyse(runs, level, field):
    """One Analysis per run: every product of the shift is made from these (and only these)."""
    settings = FrontSettings(field=field)
    return [analyse(ds, level=level, settings=settings) for ds in runs]


def _map_times(ds, every_h):
    times = np.atleast_1d(ds["time"].values)
    if every_h <= 0:
        return list(times)
    out = []
    for t in times:
        lead = _lead_h(ds, t)
        if lead is None or abs(lead / every_h - round(lead / every_h)) < 1e-6:
            out.append(t)
    return out or list(times)


def _section_jobs(table, analysis, sites, max_sections):
    """(site row, front, ds) for each front passage at each site in the newest run."""
    newest = str(analysis.dataset.attrs.get("run") or analysis.run)
    ds = analysis.dataset
    fronts = analysis.fronts
    if table is None or table.empty or "track" not in table:
        return []
    rows = table[(table["run"].astype(str) == newest) & (table["passage_utc"] != "")]
    jobs = []
    seen = set()
    for _, row in rows.iterrows():
        track = row["track"]
        if pd.isna(track):
            continue
        key = (row["site"], int(track), row.get("member"))
        if key in seen:
            continue
        seen.add(key)
        candidates = [f for f in fronts if f.track is not None and int(f.track) == int(track)]
        if not candidates:
            continue
        when = np.datetime64(pd.Timestamp(str(row["passage_utc"]).rstrip("Z")), "ns")
        front = min(candidates, key=lambda f: abs(np.datetime64(f.valid_time, "ns") - when))
        site = sites[sites["name"] == row["site"]].iloc[0]
        jobs.append((site, front, ds, abs(np.datetime64(front.valid_time, "ns") - when)))
    jobs.sort(key=lambda j: j[3])
    return [(s, f, d) for s, f, d, _ in jobs[:max_sections]]


def _thin_text(runs):
    """Every item a set of runs lacks, once each, "; "-joined (empty for full runs)."""
    items = [i for ds in runs for i in str(ds.attrs.get("thin", "") or "").split("; ") if i]
    return "; ".join(dict.fromkeys(items))


def _section_skip(analysis, max_sections):
    """Why the newest run gets no cross-section ("" when it can have them)."""
    if max_sections == 0:
        return ""
    try:
        check_section_levels(analysis.dataset)
    except InputError as exc:
        return str(exc)
    return ""


#: style of the people's HTML pages (summary, arrivals): wide tables scroll in their box
_PAGE_CSS = (
    "body{font-family:sans-serif;margin:1.5em;color:#1e2a33;max-width:80em}"
    ".wrap{overflow-x:auto;max-width:100%}"
    "table{border-collapse:collapse;font-size:0.9em}"
    "td,th{padding:3px 8px;border-bottom:1px solid #ccd3d8;text-align:left;"
    "vertical-align:top}th{background:#e9eef1}"
    "td.note{max-width:22em;white-space:normal}tr.newest td{font-weight:bold}"
    ".caution{color:#8a3b00;font-weight:bold}.muted{color:#5d6b75}"
    "img{max-width:100%;height:auto}"
)


def _html_table(frame, *, newest_mark="(newest)"):
    """Write a people's table as HTML: escaped cells, the newest run marked, in a scroll box."""
    head = "".join(f"<th>{html.escape(str(c))}</th>" for c in frame.columns)
    rows = []
    for _, r in frame.iterrows():
        cells = [str(v) for v in r.values]
        cls = " class='newest'" if any(c.endswith(newest_mark) for c in cells) else ""
        tds = "".join(
            f"<td{' class=note' if col == 'Note' else ''}>{html.escape(c) if c else '-'}</td>"
            for col, c in zip(frame.columns, cells, strict=True))
        rows.append(f"<tr{cls}>{tds}</tr>")
    return (f"<div class='wrap'><table><tr>{head}</tr>" + "".join(rows)
            + "</table></div>")


def _page(title, body):
    return ("<!DOCTYPE html>\n<html><head><meta charset='utf-8'>"
            f"<title>{html.escape(title)}</title><style>{_PAGE_CSS}</style></head><body>"
            f"<h2>{html.escape(title)}</h2><p class='caution'>{html.escape(CAUTION)}</p>"
            f"{body}</body></html>\n")


def _runs_text(labels):
    """Run labels for people, the newest (last) marked."""
    return ", ".join(f"{x} (newest)" if k == len(labels) - 1 else x
                     for k, x in enumerate(labels))


def _arrivals_html(table, labels, window, notes):
    """arrivals.html: the people's table (units in the headings); the CSV has every column."""
    people = people_table(table, runs_window=window)
    people = people[[c for c in people.columns if c in ("Site", "Front", "Run", "Passage")
                     or (people[c] != "").any()]]
    body = (f"<p>Runs {html.escape(_runs_text(labels))}; valid "
            f"{html.escape(day_hour(window[0]))} to {html.escape(day_hour(window[1]))} "
            "(times UTC as day/hour Z; heights in ft; speeds in kt; wind as direction/speed; "
            "the newest run in bold). Every column, in SI and original units, is in "
            "<a href='arrivals.csv'>arrivals.csv</a>.</p>"
            + "".join(f"<p class='caution'>{html.escape(n)}</p>" for n in notes)
            + _html_table(people))
    return _page(f"Front arrivals at the sites: runs {', '.join(labels)}", body)


def _summary_html(table, labels, newest_window, window, sites, map_rel, notes):
    """summary.html: the briefing summary (as the first pages of the pack)."""
    lines = site_lines(table, runs_window=newest_window, sites=list(sites["name"]))
    items = "".join(
        f"<li><b>{html.escape(x.partition(': ')[0])}</b>: "
        f"{html.escape(x.partition(': ')[2]).replace(' | ', '<br>')}</li>" for x in lines)
    summ = summary_table(table, runs_window=newest_window)
    body = (
        f"<p>Runs {html.escape(_runs_text(labels))}. Newest run valid "
        f"{html.escape(day_hour(newest_window[0]))} to {html.escape(day_hour(newest_window[1]))}"
        f"; all runs {html.escape(day_hour(window[0]))} to {html.escape(day_hour(window[1]))}. "
        "Times UTC as day/hour Z, heights in ft, speeds in kt, wind as direction/speed.</p>"
        + "".join(f"<p class='caution'>{html.escape(n)}</p>" for n in notes)
        + f"<h3>At the sites (newest run)</h3><ul>{items}</ul>"
        + "<h3>Passages and hazards (newest run; all runs = earliest to latest)</h3>"
        + _html_table(summ)
        + (f"<h3>Fronts of the newest run</h3><p><img src='{html.escape(map_rel)}' "
           "alt='front lines of the newest run coloured by lead time, with the sites'></p>"
           if map_rel else "")
        + "<p>More: <a href='briefing_pack.pdf'>briefing pack (PDF)</a> &middot; "
        "<a href='arrivals.html'>arrival table</a> &middot; <a href='index.html'>all products"
        "</a></p>"
    )
    return _page(f"Shift briefing summary: newest run {labels[-1]}", body)


def _index_html(manifest):
    rows = []
    files = sorted(manifest["files"], key=lambda f: f["kind"] != "summary_html")
    for f in files:
        link = html.escape(f["path"])
        thumb = (f"<img src='{link}' alt='' style='max-width:160px;max-height:110px'>"
                 if f["path"].endswith(".png") else "")
        rows.append(f"<tr><td>{thumb}</td><td><a href='{link}'>{link}</a></td>"
                    f"<td>{html.escape(f['description'])}</td><td>{f['bytes']:,}</td></tr>")
    runs = html.escape(", ".join(manifest["runs"]))
    return (
        "<!DOCTYPE html>\n<html><head><meta charset='utf-8'>"
        f"<title>frontshift shift products: {runs}</title>"
        "<style>body{font-family:sans-serif;margin:1.5em;color:#1e2a33}"
        "table{border-collapse:collapse}td,th{padding:4px 8px;border-bottom:1px solid #ccd3d8;"
        "text-align:left;vertical-align:middle}th{background:#e9eef1}"
        ".caution{color:#8a3b00;font-weight:bold}</style></head><body>"
        f"<h2>Shift products: runs {runs}</h2>"
        f"<p class='caution'>{html.escape(CAUTION)}</p>"
        "<p><b>Start here: <a href='summary.html'>briefing summary</a></b></p>"
        f"<p>Valid {html.escape(manifest['valid_from'])} to {html.escape(manifest['valid_to'])}"
        f" &middot; fronts at {manifest['level_hpa']:g} hPa on {html.escape(manifest['field'])}"
        f" &middot; source: {html.escape(manifest['source'])}"
        f" &middot; made {html.escape(manifest['created_utc'])} by frontshift "
        f"{html.escape(manifest['version'])}</p>"
        + "".join(f"<p class='caution'>Thin run {html.escape(r)}: {html.escape(t)}</p>"
                  for r, t in manifest.get("thin", {}).items())
        + "".join(f"<p>Not made: {html.escape(k['product'])}: {html.escape(k['reason'])}</p>"
                  for k in manifest.get("skipped", []))
        + "<table><tr><th></th><th>File</th><th>What</th><th>Bytes</th></tr>"
        + "".join(rows) + "</table></body></html>\n"
    )


def _finish_folder(tmp, parent, stamp, overwrite):
    """Rename the complete set into place; never replace a folder unless asked."""
    target = parent / stamp
    if overwrite and target.exists():
        trash = parent / f".replaced_{stamp}_{os.getpid()}"
        os.rename(target, trash)
        os.rename(tmp, target)
        shutil.rmtree(trash, ignore_errors=True)
        return target
    for n in range(1, 1000):
        cand = parent / (stamp if n == 1 else f"{stamp}-{n}")
        if cand.exists():
            continue
        try:
            os.rename(tmp, cand)
        except OSError:
            continue
        return cand
    raise OutputError(f"{parent}: too many product folders named {stamp}; clean up or pick --out")


def write_shift_products(run_args, sites_path, out, *, level=850.0, field="theta_w",
                         maps_every_h=6.0, max_sections=24, overwrite=False, progress=True):
    """Analyse the runs and write every shift product into a new sub-folder of ``out``.

    Parameters
    ----------
    run_args : list of str or Path
        RUN arguments (file, glob or folder of one run each).
    sites_path : str or Path
        Site list CSV.
    out : str or Path
        Parent folder of the product folders.
    level : float
        Front level [hPa].
    field : {"theta_w", "theta"}
        Thermal field.
    maps_every_h : float
        A map every this many hours of lead time [h]; 0 for every step.
    max_sections : int
        Most cross-sections.
    overwrite : bool
        Replace the folder named for the same runs once the new set is complete.
    progress : bool
        Show a tqdm progress bar on stderr.

    Returns
    -------
    pathlib.Path
        The finished product folder.
    """
    if not 100.0 <= float(level) <= 1050.0:
        raise InputError(f"--level {level:g}: expected a pressure level 100 to 1050 hPa")
    if maps_every_h < 0:
        raise InputError(f"--maps-every-h {maps_every_h:g}: expected 0 (every step) or more")
    if max_sections < 0:
        raise InputError(f"--max-sections {max_sections}: expected 0 or more")
    started = time.time()
    bar = tqdm(total=4, desc="shift", unit="step", file=sys.stderr, disable=not progress,
               dynamic_ncols=True, leave=False)
    bar.set_postfix_str("reading runs")
    runs, labels, sites = _load(run_args, sites_path)
    bar.update(1)
    bar.set_postfix_str("finding fronts")
    analyses = _analyse(runs, level, field)
    settings = analyses[-1].settings
    bar.update(1)
    all_fronts = [f for a in analyses for f in a.fronts]

    bar.set_postfix_str("arrival table")
    table, series = arrival_table(analyses, sites, return_series=True)
    bar.update(1)
    section_skip = _section_skip(analyses[-1], max_sections)
    section_jobs = [] if section_skip else _section_jobs(table, analyses[-1], sites,
                                                          max_sections)
    thin = {label: str(ds.attrs["thin"]) for label, ds in zip(labels, runs, strict=True)
            if ds.attrs.get("thin")}
    thin_all = _thin_text(runs)

    # how many products: the bar's real length
    map_times = [_map_times(ds, maps_every_h) for ds in runs]
    n_products = (2 + sum(len(t) + 2 for t in map_times) + len(section_jobs)
                  + (3 if table is not None else 0)
                  + (len(sites) if series else 0) + 2)
    bar.total = 4 + n_products
    bar.refresh()

    parent = Path(out)
    if parent.exists() and not parent.is_dir():
        raise InputError(f"--out {parent}: is a file; expected a folder")
    stamp = f"shift_{_slug(labels[-1])}"
    tmp = new_product_dir(parent, f".incomplete_{stamp}")
    products = _Products(tmp, bar)
    t_first = min(np.datetime64(ds["time"].values[0], "ns") for ds in runs)
    t_last = max(np.datetime64(ds["time"].values[-1], "ns") for ds in runs)
    sources = "; ".join(str(ds.attrs.get("source", a)) for a, ds in zip(run_args, runs,
                                                                          strict=True))
    short_source = "; ".join(source_text(ds, limit=60) for ds in runs)
    newest = analyses[-1].fronts
    n_kind = {k: sum(f.kind == k for f in newest) for k in ("cold", "warm", "quasi-stationary")}
    n_tracks = len({f.track for f in newest if f.track is not None})
    summary = [
        f"Newest run {labels[-1]}: {len(newest)} front lines in {n_tracks} tracks "
        f"({n_kind['cold']} cold, {n_kind['warm']} warm, {n_kind['quasi-stationary']} "
        f"quasi-stationary) at {level:g} hPa",
    ]
    if table is not None:
        passed = table[table["passage_utc"] != ""]
        summary.append(f"{len(passed)} front passages at {len(sites)} sites over "
                       f"{len(runs)} run(s)")
    report = plausibility(analyses)
    pooled = report.attrs["pooled"]
    if pooled.get("n_fronts"):
        masked = report["masked_below_ground_share"].astype(float)
        masked = (f"{100 * float(masked.max()):.0f} %" if masked.notna().any()
                  else "none (no surface field)")
        summary.append(
            f"Plausibility of the fronts (all runs): in a trough {pooled['trough_share']:.0%} "
            f"of the line length (chance {pooled['trough_baseline']:.0%}, lift "
            f"{pooled['trough_lift']:.2f}), cyclonic vorticity {pooled['vorticity_share']:.0%} "
            f"(chance {pooled['vorticity_baseline']:.0%}, lift {pooled['vorticity_lift']:.2f}); "
            f"lift 0 is chance, 1 every point; below-ground points masked: {masked}"
        )
    summary.extend(plausibility_notes(report))
    summary.extend(f"Run {a.run} is thin: {a.dataset.attrs['thin']}" for a in analyses
                   if a.dataset.attrs.get("thin"))
    if section_skip:
        summary.append(f"Cross-sections not made: {section_skip}")
    newest_times = np.atleast_1d(runs[-1]["time"].values)
    newest_window = (newest_times[0], newest_times[-1])
    through = [np.atleast_1d(ds["time"].values).size > 1 for ds in runs]
    skipped = [{"product": "section", "reason": section_skip}] if section_skip else []
    skipped += [{"product": f"through_run {labels[k]}",
                 "reason": "the run has one valid time; its overview map shows it"}
                for k in range(len(runs)) if not through[k]]
    pack = BriefingPack(tmp / "briefing_pack.pdf", runs=labels, valid_window=(t_first, t_last),
                        source=short_source, cover=False, thin=thin_all or None)
    people_run = _runs_text(labels)
    if table is not None:
        first_pages = summary_figures(
            run=people_run, valid_window=newest_window, source=short_source, thin=thin_all or None,
            facts=[("Runs", people_run),
                   ("Valid (newest run)", f"{day_hour(newest_window[0])} to "
                                          f"{day_hour(newest_window[1])}"),
                   ("Fronts", summary[0]),
                   ("Sites", ", ".join(sites["name"]))]
            + [("Thin run", line) for line in summary if " is thin: " in line]
            + [("Note", f"Cross-sections not made: {section_skip}")] * bool(section_skip),
            site_lines=site_lines(table, runs_window=newest_window, sites=list(sites["name"])))
        first_pages += table_figures(
            summary_table(table, runs_window=newest_window),
            title="Summary: passages and hazards at the sites (newest run; all runs = earliest "
                  "to latest)", run=people_run, valid_time=newest_window, source=short_source,
            thin=thin_all or None)
        table_pages = table_figures(table, title="Front arrivals per site (all runs)",
                                    run=", ".join(labels), valid_time=(t_first, t_last),
                                    source=short_source, thin=thin_all or None)
    else:
        first_pages, table_pages = [], []
    # the appendix: its page numbers are known before it is drawn
    n_first = len(first_pages) + 2  # + the newest run's map + the contents page
    contents, page_no = [], n_first + 1

    def entry(text, n_pages):
        nonlocal page_no
        if n_pages:
            contents.append(f"p. {page_no}: {text}" if n_pages == 1
                            else f"pp. {page_no}-{page_no + n_pages - 1}: {text}")
            page_no += n_pages

    entry("Fronts through the newest run (small multiples)", int(through[-1]))
    entry(f"Frontal maps of the newest run by valid time ({len(map_times[-1])})",
          len(map_times[-1]))
    entry("Front lines of the older run(s), coloured by lead time", len(runs) - 1)
    entry("Cross-sections through the sites across passing fronts", len(section_jobs))
    entry("Arrival table, every run (times UTC, speeds kt, heights ft)", len(table_pages))
    n_timelines = sum(any(k[0] == labels[-1] and k[2] == name for k in series)
                      for name in sites["name"]) if (series and table is not None) else 0
    entry("Site timelines (newest run)", n_timelines)
    contents.insert(0, f"pp. 1-{n_first - 1}: Briefing summary, passages and hazards, "
                       "map of the newest run")
    try:
        # fronts: GeoJSON and table
        bar.set_postfix_str("fronts")
        collection = fronts_to_geojson(all_fronts)
        collection["properties"] = {
            "product": "frontshift shift: fronts", "level_hpa": float(level),
            "field": settings.field, "runs": labels, "source": sources, "caution": CAUTION,
        }
        if thin:
            collection["properties"]["thin"] = thin
        products.add(write_json(tmp / "fronts.geojson", collection), "fronts_geojson",
                     features=len(collection.get("features", [])))
        ftable = _scalar_columns(fronts_table(all_fronts))
        if "valid_time" in ftable:
            ftable["valid_time"] = [iso_seconds(t) for t in ftable["valid_time"]]
        if thin and "run" in ftable:
            ftable["thin_run"] = [thin.get(str(r), "") for r in ftable["run"]]
        ftable["caution"] = CAUTION
        products.add(write_csv(tmp / "fronts.csv", ftable), "fronts_csv", rows=len(ftable))

        # the summary pages first: summary, table of the newest run, its map, contents
        for fig in first_pages:
            pack.add_figure(fig, title="summary")
        products.figure(maps.fronts_overview(runs[-1], list(analyses[-1].fronts), level=level,
                                             sites=sites),
                        f"maps/overview_{_slug(labels[-1])}.png", "overview", pack=pack,
                        run=labels[-1])
        pack.add_figure(cover_figure(runs=labels, valid_window=(t_first, t_last),
                                     source=short_source, sites=list(sites["name"]),
                                     summary=summary, contents=contents,
                                     thin=thin_all or None, heading="Appendix"),
                        title="appendix contents")

        # maps, newest run first into the pack
        for k in reversed(range(len(runs))):
            ds, fronts, label = runs[k], list(analyses[k].fronts), labels[k]
            field_k = analyses[k].settings.field  # theta on a run without humidity
            in_pack = pack if k == len(runs) - 1 else None
            bar.set_postfix_str(f"maps {label}")
            if k != len(runs) - 1:
                products.figure(maps.fronts_overview(ds, fronts, level=level, sites=sites),
                                f"maps/overview_{_slug(label)}.png", "overview",
                                pack=pack, run=label)
            if through[k]:
                products.figure(maps.fronts_through_time(ds, fronts, level=level,
                                                         field=field_k, sites=sites),
                                f"maps/through_run_{_slug(label)}.png", "through_run",
                                pack=in_pack, run=label)
            else:
                bar.update(1)
            # one map frame per run, redrawn per valid time (same colours through the run)
            frame = maps.MapSeries(ds, sites=sites, level=level, field=field_k)
            for t in map_times[k]:
                png = frame.draw(t, fronts, run=label)
                rel = f"maps/map_{_slug(label)}_{pd.Timestamp(t):%Y%m%dT%H%MZ}.png"
                if in_pack is not None:
                    in_pack.add_figure(frame.fig, title="map")
                products.add(write_bytes(tmp / rel, png), "map", run=label,
                             valid_time=iso_seconds(t),
                             fronts=frame.fig._frontshift.get("fronts", 0))
            frame.fig.clear()

        # sections through the sites across the passing fronts (newest run)
        for site, front, ds in section_jobs:
            bar.set_postfix_str(f"section {site['name']}")
            sec = section_across_front(ds, front, site)
            fig = section_figure(sec)
            name = (f"sections/section_{_slug(site['name'])}_{front.kind}_track{front.track}_"
                    f"{pd.Timestamp(front.valid_time):%Y%m%dT%H%MZ}.png")
            products.figure(fig, name, "section", pack=pack, site=str(site["name"]),
                            front_kind=front.kind, track=int(front.track),
                            valid_time=iso_seconds(front.valid_time))

        # arrival table and timelines
        if table is not None:
            bar.set_postfix_str("arrivals")
            frame = table.copy()
            frame["caution"] = CAUTION
            products.add(write_csv(tmp / "arrivals.csv", frame), "arrivals_csv",
                         rows=len(frame))
            notes = thin_notes(table)
            products.add(write_text(tmp / "arrivals.html",
                                    _arrivals_html(table, labels, (t_first, t_last), notes)),
                         "arrivals_html", rows=len(table))
            products.add(write_text(tmp / "summary.html", _summary_html(
                table, labels, newest_window, (t_first, t_last), sites,
                f"maps/overview_{_slug(labels[-1])}.png", notes)), "summary_html")
            for fig in table_pages:
                pack.add_figure(fig, title="Front arrivals per site")
            if series:
                for _, site in sites.iterrows():
                    key = next((k for k in series if k[0] == labels[-1]
                                and k[2] == site["name"]), None)
                    if key is None:
                        bar.update(1)
                        continue
                    bar.set_postfix_str(f"timeline {site['name']}")
                    rows = table[table["site"] == site["name"]]
                    products.figure(timeline_figure(series[key], rows),
                                    f"timelines/timeline_{_slug(site['name'])}.png",
                                    "timeline", pack=pack, site=str(site["name"]))

        bar.set_postfix_str("briefing pack")
        products.add(pack.close(), "pack", pages=pack.pages)

        manifest = {
            "product": "frontshift shift", "version": __version__,
            "created_utc": iso_seconds(pd.Timestamp.now("UTC")),
            "runs": labels, "run_args": [str(a) for a in run_args], "sites": str(sites_path),
            "level_hpa": float(level), "field": settings.field, "source": sources,
            "valid_from": iso_seconds(t_first), "valid_to": iso_seconds(t_last),
            "caution": CAUTION, "files": products.files,
            "plausibility": plausibility_metadata(report),
            "seconds": round(time.time() - started, 1),
        }
        if thin:
            manifest["thin"] = thin
        if skipped:
            manifest["skipped"] = skipped
        products.add(write_json(tmp / "manifest.json", manifest), "manifest")
        manifest["files"] = products.files
        write_text(tmp / "index.html", _index_html(manifest))
        bar.update(1)
    except KeyboardInterrupt:
        # interrupted by the forecaster: keep what was written, say where
        pack.abandon()
        bar.close()
        sys.stderr.write(f"partial products kept in {tmp}; earlier folders are untouched\n")
        raise
    except BaseException:
        # a failure (full disk, bad data): nothing half-made is left; one error line
        pack.abandon()
        bar.close()
        shutil.rmtree(tmp, ignore_errors=True)
        raise
    bar.close()
    return _finish_folder(tmp, parent, stamp, overwrite)


