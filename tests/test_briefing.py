"""Briefing pack PDF: pages, stamps, caution on every page, atomic and never overwriting."""

import matplotlib
import pandas as pd
import pytest
from pypdf import PdfReader

matplotlib.use("Agg")

from kit import CAUTION  # noqa: E402
from kit.products.briefing import BriefingPack, table_figures  # noqa: E402
from kit.charts import style  # noqa: E402
from kit.errors import InputError, OutputError  # noqa: E402

ROWS = pd.DataFrame({
    "site": ["Harrowby Field", "Kestrel Point", "Sallow Cross"],
    "front_kind": ["warm", "cold", "quasi-stationary"],
    "run": ["2031-02-03T00Z"] * 3,
    "passage_utc": ["2031-02-03T09:00Z", "2031-02-03T15:30Z", ""],
    "speed_kt": [18.0, 25.4, float("nan")],
    "note": ["", "", "front stays 400 km west of the site through the run, no passage"],
})


def _pack(path, **kw):
    return BriefingPack(path, runs=["2031-02-03T00Z"],
                        valid_window=("2031-02-03T00:00", "2031-02-05T00:00"),
                        source="invented test source", **kw)


def _stamped_figure():
    fig, ax = style.new_figure()
    ax.plot([0, 1], [1, 0])
    style.stamp(fig, run="2031-02-03T00Z", valid_time="2031-02-03T06:00", lead_h=6,
                source="invented test source", extra="test page")
    return fig


def test_pack_pages_and_caution_on_each(tmp_path):
    pack = _pack(tmp_path / "pack.pdf", sites=["Harrowby Field"], summary=["2 passages"],
                 contents=["Maps", "Arrival table"])
    pack.add_figure(_stamped_figure())
    added = pack.add_table(ROWS, title="Front arrivals", run="2031-02-03T00Z", rows_per_page=2)
    assert added == 2  # 3 rows at 2 per page
    path = pack.close()
    reader = PdfReader(path)
    assert len(reader.pages) == pack.pages == 1 + 1 + 2
    assert reader.metadata["/Subject"] == CAUTION
    texts = [p.extract_text() for p in reader.pages]
    assert "Shift briefing pack" in texts[0] and "Harrowby Field" in texts[0]
    for text in texts:
        assert "Decision support only" in text
    assert "(page 2 of 2)" in texts[-1]
    assert "Sallow Cross" in texts[-1]


def test_unstamped_figure_refused(tmp_path):
    pack = _pack(tmp_path / "pack.pdf", cover=False)
    fig, _ = style.new_figure()
    with pytest.raises(InputError, match="not stamped"):
        pack.add_figure(fig)
    pack.abandon()
    assert not (tmp_path / "pack.pdf").exists()


def test_never_overwrites_and_atomic(tmp_path):
    target = tmp_path / "pack.pdf"
    target.write_bytes(b"earlier pack")
    with pytest.raises(OutputError, match="already exists"):
        _pack(target)
    assert target.read_bytes() == b"earlier pack"
    # an error inside the with-block writes nothing
    other = tmp_path / "other.pdf"
    with pytest.raises(RuntimeError), _pack(other) as pack:
        pack.add_figure(_stamped_figure())
        raise RuntimeError("interrupted")
    assert not other.exists()
    assert not list(tmp_path.glob(".*.part"))
    with pytest.raises(InputError):
        BriefingPack(tmp_path / "pack.txt", runs=["r"], valid_window=("2031-01-01",
                     "2031-01-02"), source="s")


def test_table_cells_short_and_coloured():
    fig = table_figures(ROWS, title="Front arrivals", run="2031-02-03T00Z")[0]
    cells = [t for t in fig.texts if t.get_gid() == "frontshift-cell"]
    texts = [t.get_text() for t in cells]
    # people's headings with units, day/hour Z times, empty (never "nan") where missing
    assert texts[:4] == ["Site", "Front", "Run", "Passage"]
    assert "Speed [kt]" in [t.replace("\n", " ") for t in texts]
    assert "03/09Z" in texts and "18" in texts and "25" in texts
    assert not any(t in ("nan", "NaN", "<NA>", "None") for t in texts)
    # the note is wrapped, never cut: every word of it is on the page
    note = " ".join(t.replace("\n", " ") for t in texts if "400 km" in t or "no passage" in t)
    assert "front stays 400 km west of the site through the run, no passage" in " ".join(
        note.split())
    warm = next(t for t in cells if t.get_text() == "warm")
    assert warm.get_color() == style.FRONT_COLOURS["warm"]
    assert CAUTION in style.stamp_texts(fig)
