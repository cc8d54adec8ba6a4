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

import numpy as np
import pandas as pd
from matplotlib.backends.backend_pdf import PdfPages

from kit import CAUTION, __version__
from kit.charts import style
from kit.errors import InputError, OutputError
from kit.products.files import write_bytes

__all__ = ["BriefingPack", "cover_figure", "table_figures", "TABLE_COLUMNS"]

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


def _short_time(text):
    """``2031-02-03T09:00:00Z`` -> ``03 Feb 09:00``; other text unchanged."""
    if not isinstance(text, str) or len(text) < 16 or "T" not in text:
        return "" if text is None or (isinstance(text, float) and np.isnan(text)) else str(text)
    try:
        return pd.Timestamp(text.rstrip("Z")).strftime("%d %b %H:%M")
    except ValueError:
        return text


def _cell(value):
    if value is None:
        return ""
    if isinstance(value, str):
        try:  # numbers read back from CSV
            value = float(value) if value.strip() and not value.endswith("Z") else value
        except ValueError:
            pass
    if isinstance(value, float):
        if np.isnan(value):
            return ""
        return f"{value:.0f}" if abs(value) >= 10 or value == round(value) else f"{value:.1f}"
    if isinstance(value, str) and value.endswith("Z"):
        return _short_time(value)
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
                 thin=None):
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
        rows = [_CoverRow("Shift briefing pack", 22, bold=True, step=0.09)]
        rows += [_CoverRow(value, 11, key=key, step=0.055) for key, value in lines]
        for block_title, block in (("In this pack", contents), ("Summary", summary)):
            if not block:
                continue
            rows.append(_CoverRow(block_title, 12, bold=True, step=0.05, gap=0.02))
            for item in block[:8]:
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
                source=source, extra=f"frontshift {__version__}: cover", thin=thin)
    return fig


def table_figures(frame, *, title, run, valid_time=None, source="", columns=None,
                  rows_per_page=24, thin=None):
    """Make the pages (figures) of a table, A4 landscape, stamped; long tables continue over pages.

    Parameters
    ----------
    frame : pandas.DataFrame
        The table (e.g. the arrival table).
    title : str
        Shown as the product line of every page (``(page i of n)`` added).
    run : str
        Run label(s) for the header.
    valid_time : datetime-like or (datetime-like, datetime-like), optional
        Valid time or window for the header; the table's passage times when None.
    source : str
        Data source line.
    columns : dict, optional
        Column -> heading; default :data:`TABLE_COLUMNS` (those present), else all.
    rows_per_page : int
        Rows per page.
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
    columns = columns or {c: h for c, h in TABLE_COLUMNS.items() if c in frame.columns}
    if not columns:
        columns = {c: c for c in frame.columns}
    if valid_time is None:
        times = [pd.Timestamp(str(t).rstrip("Z")) for t in frame.get("passage_utc", [])
                 if isinstance(t, str) and t]
        valid_time = (min(times), max(times)) if times else pd.Timestamp.now("UTC").floor("h")
    body = [[_cell(v) for v in row] for row in frame[list(columns)].itertuples(index=False)]
    if "note" in columns:
        k = list(columns).index("note")
        for row in body:
            if len(row[k]) > NOTE_CHARS:
                row[k] = row[k][: NOTE_CHARS - 3] + "..."
    pages = max(1, int(np.ceil(len(body) / rows_per_page)))
    figs = []
    for page in range(pages):
        rows = body[page * rows_per_page:(page + 1) * rows_per_page]
        fig, ax = style.new_figure(figsize=(11.69, 8.27), left_in=0.4, right_in=0.4)
        ax.axis("off")
        if rows:
            table = ax.table(cellText=rows, colLabels=list(columns.values()), loc="upper center",
                             cellLoc="center", colLoc="center")
            table.auto_set_font_size(False)
            table.set_fontsize(7.5)
            table.auto_set_column_width(list(range(len(columns))))
            table.scale(1.0, 1.35)
            for (r, _c), cell in table.get_celld().items():
                cell.set_edgecolor("#c5ccd1")
                cell.set_linewidth(0.5)
                if r == 0:
                    cell.set_facecolor(style.BRIEFING_COLOURS["header_band"])
                    cell.set_text_props(fontweight="bold")
                elif r % 2 == 0:
                    cell.set_facecolor("#f6f8f9")
            kinds = list(frame[list(columns)].columns).index("front_kind") if (
                "front_kind" in columns) else None
            if kinds is not None:
                for r, row in enumerate(rows, start=1):
                    if row[kinds] in style.FRONT_COLOURS:
                        table[r, kinds].get_text().set_color(style.FRONT_COLOURS[row[kinds]])
            table.set_gid("frontshift-table")
        else:
            ax.text(0.5, 0.6, "No rows: no front passes the sites within the runs.",
                    ha="center", fontsize=12, color=style.INK, transform=ax.transAxes)
        suffix = f" (page {page + 1} of {pages})" if pages > 1 else ""
        style.stamp(fig, run=run, valid_time=valid_time, lead_h=None, source=source,
                    extra=f"{title}{suffix}; times UTC", thin=thin)
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
        """Add a table over as many pages as it needs; return the pages added."""
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
