"""Product files: atomic writes, never a silent overwrite.

Every product goes through :func:`atomic_write`: the bytes go to a temporary
file in the target folder, which is then renamed over the target in one step,
so a crash or a full disk never leaves a half-written product and an earlier
product is never lost. An existing file is replaced only with
``overwrite=True``; otherwise :class:`kit.errors.OutputError` names it.
"""

import contextlib
import html
import io
import json
import os
import tempfile
from pathlib import Path

from kit.errors import OutputError

__all__ = [
    "atomic_write",
    "write_bytes",
    "write_text",
    "write_json",
    "write_csv",
    "write_html_table",
    "save_figure",
    "new_product_dir",
]


def _check_target(path, overwrite):
    path = Path(path)
    if path.exists() and path.is_dir():
        raise OutputError(f"{path}: is a folder; expected a file path for the product")
    if path.exists() and not overwrite:
        raise OutputError(
            f"{path}: already exists; choose a new name or pass overwrite=True (--overwrite)"
        )
    parent = path.parent if str(path.parent) else Path(".")
    _make_folder(parent)
    if not os.access(parent, os.W_OK):
        raise OutputError(f"{parent}: output folder is not writable; expected a writable folder")
    return path


def _make_folder(folder):
    """Create ``folder`` (and parents) or raise one OutputError saying why and what is expected."""
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        probe = folder
        while not probe.exists() and probe != probe.parent:
            probe = probe.parent
        if probe.exists() and not probe.is_dir():
            raise OutputError(f"{probe}: is a file; expected a folder for the products") from None
        raise OutputError(
            f"{folder}: cannot create the output folder ({exc.strerror}); expected a folder "
            "you can create and write in"
        ) from None


@contextlib.contextmanager
def atomic_write(path, mode="wb", overwrite=False):
    """Open a temporary file beside ``path``; rename it over ``path`` on success.

    Parameters
    ----------
    path : str or Path
        Final product path.
    mode : {"wb", "w"}
        Binary or text (UTF-8) mode.
    overwrite : bool
        Replace an existing file; otherwise an existing file is an error.

    Yields
    ------
    file object
        Write the product into it. On any exception the temporary file is
        removed and ``path`` is untouched.
    """
    path = _check_target(path, overwrite)
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".part", dir=path.parent)
    except OSError as exc:
        raise OutputError(
            f"{path.parent}: cannot create a file in the output folder ({exc.strerror}); "
            "expected a writable folder"
        ) from None
    try:
        text_kw = {"encoding": "utf-8", "newline": ""} if "b" not in mode else {}
        with os.fdopen(fd, mode, **text_kw) as fh:
            yield fh
            fh.flush()
            os.fsync(fh.fileno())
        if path.exists() and not overwrite:  # appeared while we wrote
            raise OutputError(f"{path}: appeared while writing; not overwritten")
        os.replace(tmp, path)
    except OSError as exc:
        with contextlib.suppress(OSError):
            os.unlink(tmp)
        if isinstance(exc, OutputError):
            raise
        raise OutputError(f"{path}: could not write the product ({exc.strerror or exc})") from None
    except BaseException:
        with contextlib.suppress(OSError):
            os.unlink(tmp)
        raise


def write_bytes(path, data, overwrite=False):
    """Write ``data`` (bytes) atomically to ``path``; return the Path."""
    with atomic_write(path, "wb", overwrite) as fh:
        fh.write(data)
    return Path(path)


def write_text(path, text, overwrite=False):
    """Write ``text`` (UTF-8) atomically to ``path``; return the Path."""
    return write_bytes(path, text.encode("utf-8"), overwrite)


def write_json(path, obj, overwrite=False):
    """Write ``obj`` as indented JSON (e.g. a GeoJSON FeatureCollection)."""
    return write_text(path, json.dumps(obj, indent=1, allow_nan=False) + "\n", overwrite)


def write_csv(path, frame, overwrite=False):
    """Write a pandas DataFrame as CSV (no index column) atomically."""
    return write_text(path, frame.to_csv(index=False, lineterminator="\n"), overwrite)


def write_html_table(path, frame, title, caution, overwrite=False, notes=()):
    """Write a DataFrame as a small stand-alone HTML page with title and caution.

    ``notes`` are further lines printed under the caution (e.g. what a thin
    run lacks); none for a full run, whose page is then as before.
    """
    body = frame.to_html(index=False, na_rep="", border=0, classes="fs-table")
    extra = "".join(f"<p class='note'>{html.escape(str(n))}</p>" for n in notes)
    page = (
        "<!DOCTYPE html>\n<html><head><meta charset='utf-8'>"
        f"<title>{html.escape(title)}</title>"
        "<style>body{font-family:sans-serif;margin:1.5em}"
        ".fs-table{border-collapse:collapse;font-size:0.9em}"
        ".fs-table th,.fs-table td{padding:3px 8px;border-bottom:1px solid #bbb;text-align:right}"
        ".fs-table th{background:#e8eef2}.caution{color:#7a3000;font-weight:bold}"
        + (".note{color:#7a3000}" if extra else "")
        + "</style>"
        f"</head><body><h2>{html.escape(title)}</h2>"
        f"<p class='caution'>{html.escape(caution)}</p>{extra}{body}</body></html>\n"
    )
    return write_text(path, page, overwrite)


def figure_metadata(fig, fmt):
    """Metadata to save with a stamped figure: run, valid time, subject, source, caution.

    Parameters
    ----------
    fig : matplotlib.figure.Figure
        A figure passed through :func:`kit.charts.style.stamp` (which leaves
        ``fig._frontshift["metadata"]``; figure modules may add
        ``fig._frontshift["describe"]``, e.g. a timeline's passages).
    fmt : str
        ``"png"``, ``"svg"`` or ``"pdf"``.

    Returns
    -------
    dict or None
        Keys the format accepts (PNG: text chunks; PDF: Title, Subject, Keywords;
        SVG: Title, Description); None for an unstamped figure.
    """
    meta = dict(getattr(fig, "_frontshift", {}).get("metadata") or {})
    if not meta:
        return None
    extra = [str(x) for x in getattr(fig, "_frontshift", {}).get("describe", [])]
    if extra:
        meta["Description"] = "; ".join([meta.get("Description", "")] + extra).strip("; ")
    if fmt == "png":
        return meta
    if fmt == "pdf":
        return {"Title": meta["Title"], "Subject": meta.get("Description", ""),
                "Keywords": meta["Disclaimer"], "Creator": "frontshift"}
    if fmt == "svg":
        return {"Title": meta["Title"],
                "Description": f"{meta.get('Description', '')} {meta['Disclaimer']}".strip()}
    return None


def save_figure(fig, path, overwrite=False, dpi=110):
    """Save a matplotlib figure atomically; the format follows the suffix (png, svg, pdf)."""
    path = Path(path)
    fmt = path.suffix.lower().lstrip(".")
    if fmt not in ("png", "svg", "pdf"):
        raise OutputError(f"{path}: unknown figure format '.{fmt}'; expected .png, .svg or .pdf")
    buf = io.BytesIO()
    fig.savefig(buf, format=fmt, dpi=dpi, metadata=figure_metadata(fig, fmt))
    return write_bytes(path, buf.getvalue(), overwrite)


def new_product_dir(parent, stamp):
    """Create a fresh sub-folder ``parent/stamp`` (``stamp-2``, ``-3``... if taken).

    Earlier products are never touched: each shift run gets its own folder.
    """
    parent = Path(parent)
    _make_folder(parent)
    for n in range(1, 1000):
        cand = parent / (stamp if n == 1 else f"{stamp}-{n}")
        try:
            cand.mkdir()
            return cand
        except FileExistsError:
            continue
        except OSError as exc:
            raise OutputError(
                f"{cand}: cannot create the product folder ({exc.strerror}); expected a "
                "writable folder"
            ) from None
    raise OutputError(f"{parent}: too many product folders named {stamp}; clean up or pick --out")
