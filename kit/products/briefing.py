"""The briefing pack: one PDF with a cover, maps, sections, arrival tables, timelines.

Pages are added as the products are made (:class:`BriefingPack`), held in
memory and written in one atomic step through :mod:`kit.products.files` when the pack
is closed, so an interrupted run never leaves a half-written PDF and an
earlier pack is never replaced silently. Every page carries the run, valid
time, the data source and :data:`kit.CAUTION`: figures must be stamped
(:func:`kit.charts.style.stamp`) before they are added; the cover and table
pages are stamped here.

Examples
--------
>>> import pandas as pd
>>> from kit.products.briefing import BriefingPack
>>> pack = BriefingPack("/tmp/doctest_pack.pdf", runs=["2031-02-03T00Z"],
...                     valid_window=("2031-02-03T00Z", "2031-02-05T00Z"), source="demo",
...                     overwrite=True)
>>> rows = pd.DataFrame({"site": ["Harrowby Field"], "passage_utc": ["2031-02-03T09:00:00Z"]})
>>> pack.add_table(rows, title="Front arrivals", run="2031-02-03T00Z")
1
>>> pack.close().name, pack.pages
('doctest_pack.pdf', 2)
"""

import io
import textwrap
from pathlib import Path

import matplotlib.patches
import numpy as np
import pandas as pd
from matplotlib.backends.backend_pdf import PdfPages
from matplotlib.font_manager import FontProperties

from kit import CAUTION, __version__
from kit.charts import style
from kit.errors import InputError, OutputError
from kit.products.arrivals import (
    PEOPLE_KEY_COLUMNS,
    clean_text,
    day_hour,
    is_missing,
    newest_run,
    people_table,
)
from kit.products.files import write_bytes

__all__ = ["BriefingPack", "cover_figure", "table_figures", "summary_figures", "layout_table",
           "TableLayout", "TABLE_COLUMNS"]

#: arrival-table columns shown in the pack (forecaster-facing subset), with headings
TABLE_COLUMNS = {
    "site": "Site",
    "front_kind": "Front",
    "run": "Run",
    "passage_utc": "Passage (UTC)",
    "spread_h": "Spread [h]",
    "speed_kt": "Speed [kt]",
    "precip_start_utc": "Rain from",
    "precip_end_utc": "Rain to",
    "wind_before_deg": "Wind before [\u00b0]",
    "wind_after_deg": "Wind after [\u00b0]",
    "wind_turn_deg": "Turn [\u00b0]",
    "temp_change_c": "\u0394T [\u00b0C]",
    "freezing_level_before_m": "0\u00b0C before [m]",
    "freezing_level_after_m": "0\u00b0C after [m]",
    "note": "Note",
}

#: longest note shown in a table cell [characters]
NOTE_CHARS = 34

#: extra cautions printed on the cover (the kit's own wording)
COVER_NOTES = (
    "Fronts are found objectively from model fields (thermal front parameter of smoothed "
    "theta-w); they are a first guess for the analysis, not the analysis.",
    "Arrival times come from the model runs shown; the spread between runs is a floor, "
    "not a bound, on the timing uncertainty.",
    "Check every product against observations, radar and satellite before it is used.",
)


def _cell(value):
    """Format a cell as people read it: missing as "", UTC times as day/hour Z, numbers rounded."""
    if is_missing(value):
        return ""
    if isinstance(value, str):
        if "T" in value and value.endswith("Z") and len(value) >= 16:
            return day_hour(value)
        try:  # numbers read back from CSV
            value = float(value) if value.strip() else value
        except ValueError:
            return value
    if isinstance(value, (float, np.floating)):
        if not np.isfinite(value):
            return ""
        return f"{value:.0f}" if abs(value) >= 10 or value == round(value) else f"{value:.1f}"
    return str(value)


#: width of the cover's text column [inches]: A4 landscape less the 0.8 in margins
_COVER_TEXT_IN = 11.69 - 1.6
#: mean character width of the cover font [em] (DejaVu Sans, measured on plain text)
_CHAR_EM = 0.56


class _CoverRow:
    """One line of the cover: text, size [pt], its key (bold, grey, left) and height [axes]."""

    def __init__(self, text, size, *, step, key=None, bold=False, colour=None, gap=0.0,
                 indent=0.0, caution_head=False):
        self.text, self.size, self.key, self.bold = text, size, key, bold
        self.colour = colour or style.INK
        self.step, self.gap, self.indent, self.caution_head = step, gap, indent, caution_head


def _bullet(text, size, *, step, scale=1.0, colour=None):
    """Make the rows of a bulleted item, wrapped to the text column at ``size * scale`` [pt]."""
    chars = int((_COVER_TEXT_IN - 0.3) * 72.0 / (_CHAR_EM * size * scale))
    parts = textwrap.wrap(str(text), max(chars, 20)) or [""]
    last = len(parts) - 1
    return [_CoverRow(("\u2022 " if k == 0 else "  ") + part, size, colour=colour, indent=0.02,
                      step=step if k == last else 0.75 * step) for k, part in enumerate(parts)]


def _cover_scale(rows):
    """Shrink factor of lines and type so the rows fit the page body (at most 1, at least 0.65)."""
    total = sum(r.step + r.gap for r in rows)
    return min(1.0, max(0.65, 0.97 / total)) if total > 0 else 1.0


def _draw_cover(ax, rows, scale):
    """Lay the rows out top-down, lines and type shrunk by ``scale``.

    The caution block starts no lower than 0.30 of the page body (as it
    always has) and, on a full cover (``scale < 1``), right after the summary,
    so it never runs into the footer.
    """
    y = 0.97
    for r in rows:
        y -= r.gap * scale
        if r.caution_head and scale >= 1.0:
            y = min(y, 0.30)
        size = r.size * scale
        if r.key is not None:
            ax.text(0.0, y, r.key, fontsize=size, fontweight="bold",
                    color=style.BRIEFING_COLOURS["muted"], va="top", transform=ax.transAxes)
            ax.text(0.13, y, r.text, fontsize=size, color=r.colour, va="top",
                    transform=ax.transAxes)
        else:
            ax.text(r.indent, y, r.text, fontsize=size, fontweight="bold" if r.bold else "normal",
                    color=r.colour, va="top", transform=ax.transAxes)
        y -= r.step * scale


def cover_figure(*, runs, valid_window, source, sites=None, summary=None, contents=None,
                 thin=None, heading="Shift briefing pack"):
    """Make the pack's cover page: runs, valid window, sites, contents and the cautions.

    Parameters
    ----------
    runs : list of str
        Run labels.
    valid_window : (datetime-like, datetime-like)
        First and last valid time (UTC).
    source : str
        Data source line.
    sites : list of str, optional
        Site names.
    summary : list of str, optional
        Short lines (fronts found, passages...).
    contents : list of str, optional
        Page groups of the pack.
    thin : str, optional
        What the thin run(s) lack and what was done instead (``ds.attrs["thin"]``),
        for the header line (the summary says it in full).
    heading : str
        The page's heading (e.g. ``Appendix`` when the summary pages come first).

    Returns
    -------
    matplotlib.figure.Figure
        Stamped (A4 landscape).
    """
    fig, ax = style.new_figure(figsize=(11.69, 8.27), left_in=0.8, right_in=0.8)
    ax.axis("off")
    lines = [
        ("Runs", ", ".join(runs)),
        ("Valid", f"{style.format_utc(valid_window[0])} to {style.format_utc(valid_window[1])}"),
        ("Source", style.source_text(source, limit=110)),
    ]
    if sites:
        names = ", ".join(sites)
        lines.append(("Sites", names if len(names) < 110 else names[:107] + "..."))

    def build(scale):
        """Make the cover's rows, long items wrapped for type shrunk by ``scale``."""
        rows = [_CoverRow(heading, 22, bold=True, step=0.09)]
        rows += [_CoverRow(value, 11, key=key, step=0.055) for key, value in lines]
        for block_title, block in (("In this pack", contents), ("Summary", summary)):
            if not block:
                continue
            rows.append(_CoverRow(block_title, 12, bold=True, step=0.05, gap=0.02))
            for item in block[:14]:
                rows += _bullet(item, 10, step=0.042, scale=scale)
        rows.append(_CoverRow("Caution", 12, bold=True, step=0.05,
                              colour=style.BRIEFING_COLOURS["caution"], caution_head=True))
        for note in (CAUTION, *COVER_NOTES):
            rows += _bullet(note, 9.5, step=0.045, scale=scale, colour=style.BRIEFING_COLOURS[
                "caution"] if note == CAUTION else style.INK)
        return rows

    scale = 1.0
    for _ in range(4):  # wrap, measure, shrink; a few rounds settle it
        rows = build(scale)
        wanted = _cover_scale(rows)
        if wanted >= scale - 1e-3:
            break
        scale = wanted
    _draw_cover(ax, rows, scale)
    style.stamp(fig, run=", ".join(runs), valid_time=tuple(valid_window), lead_h=None,
                source=source, extra=f"frontshift {__version__}: {heading.lower()}", thin=thin)
    return fig


#: A4 landscape page [inches]
PAGE_IN = (11.69, 8.27)
#: side margins of a table page [inches]
TABLE_MARGIN_IN = 0.4
#: widest column before its text wraps [inches]
MAX_COLUMN_IN = 2.3
#: table type sizes tried, largest first [pt]; below the last the columns are split
TABLE_FONTS_PT = (8.0, 7.5, 7.0, 6.5)
#: padding inside a cell [inches]
CELL_PAD_IN = 0.05


def _text_width_in(renderer, text, size_pt, bold=False):
    """Width of one line of text as drawn [inches] (measured by the renderer)."""
    if not text:
        return 0.0
    prop = FontProperties(family=style.FONT["family"], size=size_pt,
                          weight="bold" if bold else "normal")
    width, _, _ = renderer.get_text_width_height_descent(text, prop, ismath=False)
    return width / renderer.dpi


def _wrap_to(renderer, text, size_pt, width_in, bold=False):
    """Wrap ``text`` on spaces (hard-cut a word only when it alone is too wide) to ``width_in``."""
    lines = []
    for para in str(text).split("\n"):
        words = para.split(" ")
        line = ""
        for word in words:
            trial = f"{line} {word}" if line else word
            if _text_width_in(renderer, trial, size_pt, bold) <= width_in or not line:
                line = trial
            else:
                lines.append(line)
                line = word
            while _text_width_in(renderer, line, size_pt, bold) > width_in and len(line) > 1:
                k = len(line) - 1
                while k > 1 and _text_width_in(renderer, line[:k], size_pt, bold) > width_in:
                    k -= 1
                lines.append(line[:k])
                line = line[k:]
        lines.append(line)
    return lines or [""]


class TableLayout:
    """Measured layout of a table on a page: type size, column groups and wrapped cells.

    Attributes
    ----------
    font_pt : float
        Type size [pt].
    groups : list of list of int
        Column indices drawn together (one group per page width; key columns repeated).
    widths_in : list of float
        Width of each column [inches], padding included.
    header : list of list of str
        Wrapped heading lines per column.
    cells : list of list of list of str
        Wrapped lines per row and column.
    width_in : float
        Room across the page [inches].
    """

    def __init__(self, font_pt, groups, widths_in, header, cells, width_in):
        self.font_pt, self.groups, self.widths_in = font_pt, groups, widths_in
        self.header, self.cells, self.width_in = header, cells, width_in

    def group_width_in(self, group):
        """Width of one column group as drawn [inches]."""
        return sum(self.widths_in[c] for c in group)

    def line_in(self):
        """Height of one text line [inches]."""
        return self.font_pt * 1.25 / 72.0

    def row_in(self, lines):
        """Height of a row of ``lines`` text lines [inches]."""
        return lines * self.line_in() + 2 * CELL_PAD_IN


def layout_table(headings, body, *, width_in, renderer, key=None):
    """Lay a table out to fit ``width_in``: wrap long cells, shrink type, split columns.

    Each column is as wide as its widest cell (wrapped at :data:`MAX_COLUMN_IN`)
    or its heading's longest word; when the sum is wider than the page the type
    shrinks through :data:`TABLE_FONTS_PT`, and at the smallest size the columns
    are split into groups that each fit, the ``key`` columns leading every group.

    Parameters
    ----------
    headings : list of str
    body : list of list of str
        Cell texts (already formatted).
    width_in : float
        Room across the page [inches].
    renderer : matplotlib renderer
        Measures the text.
    key : list of int, optional
        Columns repeated in every group (default the first one).

    Returns
    -------
    TableLayout
    """
    key = [k for k in (key if key is not None else [0]) if k < len(headings)]
    for size in TABLE_FONTS_PT:
        pad = 2 * CELL_PAD_IN
        widths = []
        for c, head in enumerate(headings):
            word = max((_text_width_in(renderer, w, size, True) for w in head.split()),
                       default=0.0)
            cells = max((_text_width_in(renderer, row[c], size) for row in body), default=0.0)
            widths.append(min(max(word, cells, 0.25), MAX_COLUMN_IN) + pad)
        if sum(widths) <= width_in or size == TABLE_FONTS_PT[-1]:
            break
    groups, group = [], list(key)
    for c in range(len(headings)):
        if c in key:
            continue
        if group != key and sum(widths[k] for k in group) + widths[c] > width_in:
            groups.append(group)
            group = list(key)
        group.append(c)
    if group != key or not groups:
        groups.append(group)
    header = [_wrap_to(renderer, h, size, widths[c] - pad, True) for c, h in enumerate(headings)]
    cells = [[_wrap_to(renderer, v, size, widths[c] - pad) for c, v in enumerate(row)]
             for row in body]
    return TableLayout(size, groups, widths, header, cells, width_in)


def _paginate(layout, height_in, rows_per_page):
    """Split row indices into pages that fit ``height_in`` [inches] (at most rows_per_page)."""
    head = layout.row_in(max((len(h) for h in layout.header), default=1))
    pages, page, used = [], [], head
    for r, row in enumerate(layout.cells):
        h = layout.row_in(max(len(c) for c in row))
        if page and (used + h > height_in or len(page) >= rows_per_page):
            pages.append(page)
            page, used = [], head
        page.append(r)
        used += h
    pages.append(page)
    return pages


def _draw_table(fig, layout, group, rows, *, top_in, left_in, bold_rows=(), colours=None):
    """Draw the rows of one column group from ``top_in`` down (figure inches)."""
    tr = fig.dpi_scale_trans
    size = layout.font_pt

    def draw_row(texts, y, height, face, bold):
        x = left_in
        fig.add_artist(matplotlib.patches.Rectangle(
            (x, y - height), layout.group_width_in(group), height, transform=tr,
            facecolor=face, edgecolor="#c5ccd1", linewidth=0.5, zorder=1))
        for c in group:
            lines, colour = texts[c]
            fig.text(x + CELL_PAD_IN, y - CELL_PAD_IN, "\n".join(lines), transform=tr,
                     ha="left", va="top", fontsize=size, linespacing=1.25 * 0.96,
                     fontweight="bold" if bold else "normal", color=colour or style.INK,
                     gid="frontshift-cell", zorder=2)
            x += layout.widths_in[c]

    y = top_in
    head_h = layout.row_in(max(len(layout.header[c]) for c in group))
    draw_row({c: (layout.header[c], None) for c in group}, y, head_h,
             style.BRIEFING_COLOURS["header_band"], True)
    y -= head_h
    for n, r in enumerate(rows):
        cells = layout.cells[r]
        h = layout.row_in(max(len(cells[c]) for c in group))
        texts = {c: (cells[c], (colours or {}).get((r, c))) for c in group}
        draw_row(texts, y, h, "#f6f8f9" if n % 2 else "white", r in bold_rows)
        y -= h
    return y


def _people_frame(frame, runs_window=None):
    """Format an arrival table as people read it; any other frame with its cells cleaned."""
    if {"site", "passage_utc"} <= set(frame.columns):
        people = people_table(frame, runs_window=runs_window)
        kept = [c for c in people.columns if c in PEOPLE_KEY_COLUMNS
                or (people[c] != "").any()]
        return people[kept]
    cells = frame.map(_cell)
    return cells[[c for c in cells.columns if c in PEOPLE_KEY_COLUMNS or (cells[c] != "").any()]]


def table_figures(frame, *, title, run, valid_time=None, source="", columns=None,
                  rows_per_page=24, thin=None):
    """Make the pages (figures) of a table, A4 landscape, stamped; nothing cut at the page edge.

    An arrival table (``site``, ``passage_utc`` ...) is shown as people read it
    (:func:`kit.products.arrivals.people_table`: headings with units, times as
    day/hour Z, heights in ft, speeds in kt, the newest run marked and in bold);
    any other frame as its cleaned cells. Columns wrap, the type shrinks and,
    if still too wide, the columns are split over pages with the key columns
    repeated (:func:`layout_table`); long tables continue over pages.

    Parameters
    ----------
    frame : pandas.DataFrame
        The table (e.g. the arrival table, or a table of display strings).
    title : str
        Shown as the product line of every page (``(page i of n)`` added).
    run : str
        Run label(s) for the header.
    valid_time : datetime-like or (datetime-like, datetime-like), optional
        Valid time or window of the runs for the header; the table's passage
        times when None (never the machine's clock).
    source : str
        Data source line.
    columns : dict, optional
        Column -> heading, to show only these columns of a frame of display strings.
    rows_per_page : int
        Most rows per page.
    thin : str, optional
        What the thin run(s) of the table lack (``ds.attrs["thin"]``), for the header.

    Returns
    -------
    list of matplotlib.figure.Figure
    """
    if not isinstance(frame, pd.DataFrame):
        raise InputError(f"table page: got {type(frame).__name__}; expected a pandas DataFrame")
    if rows_per_page < 1:
        raise InputError(f"table page: rows_per_page={rows_per_page}; expected at least 1")
    if valid_time is None:
        times = [pd.Timestamp(str(t).rstrip("Z")) for t in frame.get("passage_utc", [])
                 if isinstance(t, str) and t]
        if not times:
            raise InputError(f"table page {title!r}: no valid time given and no passage times; "
                             "expected valid_time=(first, last) of the runs")
        valid_time = (min(times), max(times))
    window = valid_time if isinstance(valid_time, (tuple, list)) else None
    newest = newest_run(frame) if "run" in frame else None
    shown = _people_frame(frame, window)
    if columns:
        shown = shown[[c for c in columns if c in shown.columns]].rename(columns=columns)
    headings = [str(c) for c in shown.columns]
    body = [[clean_text(v) for v in row] for row in shown.itertuples(index=False)]
    bold_rows = set()
    colours = {}
    if "Run" in headings and newest:
        k = headings.index("Run")
        bold_rows = {r for r, row in enumerate(body) if row[k].endswith("(newest)")}
    if "Front" in headings:
        k = headings.index("Front")
        colours = {(r, k): style.FRONT_COLOURS[row[k]] for r, row in enumerate(body)
                   if row[k] in style.FRONT_COLOURS}
    width_in = PAGE_IN[0] - 2 * TABLE_MARGIN_IN
    probe, _ = style.new_figure(figsize=PAGE_IN)
    renderer = probe.canvas.get_renderer()
    key = [headings.index(h) for h in PEOPLE_KEY_COLUMNS if h in headings] or [0]
    layout = layout_table(headings, body, width_in=width_in, renderer=renderer, key=key)
    top_in = PAGE_IN[1] - style.HEADER_IN - 0.2
    room_in = top_in - style.FOOTER_IN - 0.45
    pages = _paginate(layout, room_in, rows_per_page) if body else [[]]
    sheets = [(p, g) for p in pages for g in layout.groups]
    figs = []
    for n, (rows, group) in enumerate(sheets):
        fig, ax = style.new_figure(figsize=PAGE_IN, left_in=TABLE_MARGIN_IN,
                                   right_in=TABLE_MARGIN_IN)
        ax.axis("off")
        if body:
            _draw_table(fig, layout, group, rows, top_in=top_in, left_in=TABLE_MARGIN_IN,
                        bold_rows=bold_rows, colours=colours)
        else:
            ax.text(0.5, 0.6, "No rows: no front passes the sites within the runs.",
                    ha="center", fontsize=12, color=style.INK, transform=ax.transAxes)
        fig._frontshift["table_layout"] = layout
        notes = []
        if len(sheets) > 1:
            notes.append(f"page {n + 1} of {len(sheets)}")
        if len(layout.groups) > 1:
            notes.append(f"columns part {layout.groups.index(group) + 1} of {len(layout.groups)}")
        suffix = f" ({', '.join(notes)})" if notes else ""
        extra = f"{title}{suffix}; times UTC (day/hour Z)"
        if bold_rows:
            extra += "; newest run in bold"
        style.stamp(fig, run=run, valid_time=valid_time, lead_h=None, source=source,
                    extra=extra, thin=thin)
        figs.append(fig)
    return figs


def summary_figures(*, run, valid_window, source, facts, site_lines, thin=None,
                    heading="Shift briefing: summary"):
    """Make the summary page(s): key facts, one plain-language line per site, the caution.

    Lines are wrapped to the page as measured; what does not fit continues on
    a further page, so nothing is cut.

    Parameters
    ----------
    run : str
        Run label(s) for the header (the newest run marked).
    valid_window : (datetime-like, datetime-like)
        First and last valid time of the newest run (UTC).
    source : str
        Data source line.
    facts : list of (str, str)
        Key and text lines under the heading (runs, valid window, sites...).
    site_lines : list of str
        One line per site (:func:`kit.products.arrivals.site_lines`).
    thin : str, optional
        What the thin run(s) lack (``ds.attrs["thin"]``).
    heading : str
        The page heading.

    Returns
    -------
    list of matplotlib.figure.Figure
        Stamped, A4 landscape.
    """
    left, width = 0.8, PAGE_IN[0] - 1.6
    top = PAGE_IN[1] - style.HEADER_IN - 0.3
    bottom = style.FOOTER_IN + 0.25
    probe, _ = style.new_figure(figsize=PAGE_IN)
    renderer = probe.canvas.get_renderer()
    size = 9.5
    blocks = []  # (lines, size, bold, colour, gap before [in])
    blocks.append(([heading], 18, True, style.INK, 0.0, False))
    for key, text in facts:
        blocks.append((_wrap_to(renderer, f"{key}: {text}", size, width), size, False,
                       style.INK, 0.02, False))
    blocks.append((["At the sites (newest run; times UTC as day/hour Z; wind deg/kt)"], 11,
                   True, style.INK, 0.12, False))
    for line in site_lines:
        name, _, rest = line.partition(": ")
        wrapped = _wrap_to(renderer, rest.replace(" | ", "  |  "), size, width - 0.25)
        blocks.append(([name] + ["    " + w for w in wrapped], size, False, style.INK, 0.06,
                       True))
    caution = [CAUTION, *COVER_NOTES]
    tail = []
    for k, note in enumerate(caution):
        tail.append((_wrap_to(renderer, note, 8.5, width), 8.5, k == 0,
                     style.BRIEFING_COLOURS["caution"] if k == 0 else style.INK, 0.03, False))
    tail_in = sum(len(b[0]) * b[1] * 1.35 / 72.0 + b[4] for b in tail) + 0.15

    pages, page, used = [], [], 0.0
    for block in blocks:
        need = len(block[0]) * block[1] * 1.35 / 72.0 + block[4]
        if page and used + need > top - bottom - tail_in:
            pages.append(page)
            page, used = [], 0.0
        page.append(block)
        used += need
    pages.append(page)
    figs = []
    for n, blocks_n in enumerate(pages):
        fig, ax = style.new_figure(figsize=PAGE_IN, left_in=left, right_in=left)
        ax.axis("off")
        tr = fig.dpi_scale_trans
        y = top
        for lines, pt, bold, colour, gap, first_bold in blocks_n:
            y -= gap
            for k, text in enumerate(lines):
                fig.text(left, y, text, transform=tr, ha="left", va="top", fontsize=pt,
                         fontweight="bold" if bold or (first_bold and k == 0) else "normal",
                         color=colour, gid="frontshift-summary")
                y -= pt * 1.35 / 72.0
        y = bottom + tail_in
        for lines, pt, bold, colour, gap, _ in tail:
            y -= gap
            for text in lines:
                fig.text(left, y, text, transform=tr, ha="left", va="top", fontsize=pt,
                         fontweight="bold" if bold else "normal", color=colour,
                         gid="frontshift-summary")
                y -= pt * 1.35 / 72.0
        part = f" (page {n + 1} of {len(pages)})" if len(pages) > 1 else ""
        style.stamp(fig, run=run, valid_time=tuple(valid_window), lead_h=None, source=source,
                    extra=f"Briefing summary{part}: newest run, spread from the other runs",
                    thin=thin)
        figs.append(fig)
    return figs


class BriefingPack:
    """Collect stamped pages into one PDF, written atomically on :meth:`close`.

    The cover (when asked) is the first page, made at once from the arguments.

    Parameters
    ----------
    path : str or Path
        Target PDF.
    runs : list of str
        Run labels (cover and PDF metadata).
    valid_window : (datetime-like, datetime-like)
        First and last valid time.
    source : str
        Data source line.
    sites : list of str, optional
        Site names for the cover.
    summary, contents : list of str, optional
        Cover lines.
    overwrite : bool
        Replace an existing PDF (never silent otherwise).
    cover : bool
        Start with the cover page.
    thin : str, optional
        What the thin run(s) lack and what was done instead, for the cover.
    """

    def __init__(self, path, *, runs, valid_window, source, sites=None, summary=None,
                 contents=None, overwrite=False, cover=True, thin=None):
        self.path = Path(path)
        if self.path.suffix.lower() != ".pdf":
            raise InputError(f"{self.path}: briefing pack must end in .pdf")
        if self.path.exists() and not overwrite:
            raise OutputError(f"{self.path}: already exists; choose a new name or pass --overwrite")
        self.overwrite = overwrite
        self.runs = list(runs)
        self.valid_window = valid_window
        self.source = source
        self._buffer = io.BytesIO()
        self._pdf = PdfPages(self._buffer, metadata={
            "Title": f"frontshift briefing pack, runs {', '.join(self.runs)}",
            "Subject": CAUTION,
            "Creator": f"frontshift {__version__}",
        })
        self.pages = 0
        self.titles = []
        self._closed = False
        if cover:
            self.add_figure(cover_figure(runs=self.runs, valid_window=valid_window,
                                         source=source, sites=sites, summary=summary,
                                         contents=contents, thin=thin), title="cover")

    def add_figure(self, fig, title=None):
        """Add a stamped figure as one page; return the page count so far."""
        if self._closed:
            raise OutputError(f"{self.path}: pack already closed; start a new BriefingPack")
        state = getattr(fig, "_frontshift", {}) or {}
        if not state.get("stamped"):
            raise InputError(
                "briefing pack: figure is not stamped; expected kit.charts.style.stamp(fig, ...) "
                "first (run, valid time, source, caution)"
            )
        self._pdf.savefig(fig)
        self.pages += 1
        self.titles.append(title or state.get("kind", "figure"))
        return self.pages

    def add_table(self, frame, *, title, run, valid_time=None, rows_per_page=24, thin=None):
        """Add a table over as many pages as it needs; return the pages added.

        The header's valid window is ``valid_time``, else the pack's valid window.
        """
        valid_time = self.valid_window if valid_time is None else valid_time
        figs = table_figures(frame, title=title, run=run, valid_time=valid_time,
                             source=self.source, rows_per_page=rows_per_page, thin=thin)
        for fig in figs:
            self.add_figure(fig, title=title)
        return len(figs)

    def close(self):
        """Finish the PDF and write it atomically; return the Path."""
        if self._closed:
            return self.path
        self._pdf.close()
        self._closed = True

        return write_bytes(self.path, self._buffer.getvalue(), overwrite=self.overwrite)

    def abandon(self):
        """Drop the pack without writing anything (e.g. after an error)."""
        if not self._closed:
            self._pdf.close()
            self._closed = True

    def __enter__(self):
        return self

    def __exit__(self, exc_type, exc, tb):
        if exc_type is None:
            self.close()
        else:
            self.abandon()
        return False
