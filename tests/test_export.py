"""Safe product writing: atomic, never a silent overwrite (issue 10, item 3)."""

import os

import pandas as pd
import pytest

from kit import CAUTION
from kit.errors import OutputError
from kit.products.files import (
    atomic_write,
    new_product_dir,
    write_csv,
    write_html_table,
    write_json,
    write_text,
)


def test_write_then_refuse_overwrite(tmp_path):
    target = tmp_path / "a.txt"
    write_text(target, "first")
    with pytest.raises(OutputError, match="already exists"):
        write_text(target, "second")
    assert target.read_text() == "first"
    write_text(target, "second", overwrite=True)
    assert target.read_text() == "second"


def test_failure_midway_keeps_earlier_product_and_leaves_no_temp(tmp_path):
    target = tmp_path / "p.json"
    write_json(target, {"v": 1})
    with pytest.raises(RuntimeError):
        with atomic_write(target, "w", overwrite=True) as fh:
            fh.write('{"v": 2')
            raise RuntimeError("interrupted")
    assert target.read_text().strip().endswith("}")
    assert '"v": 1' in target.read_text()
    assert [p.name for p in tmp_path.iterdir()] == ["p.json"]


def test_unwritable_folder_is_one_line_error(tmp_path):
    locked = tmp_path / "locked"
    locked.mkdir()
    os.chmod(locked, 0o500)
    try:
        if os.access(locked, os.W_OK):  # root ignores permission bits
            blocker = tmp_path / "file"
            blocker.write_text("x")
            with pytest.raises(OutputError) as err:
                write_text(blocker / "sub" / "a.txt", "x")
        else:
            with pytest.raises(OutputError) as err:
                write_text(locked / "a.txt", "x")
        assert "\n" not in str(err.value)
    finally:
        os.chmod(locked, 0o700)


def test_json_rejects_nan(tmp_path):
    with pytest.raises(ValueError):
        write_json(tmp_path / "x.json", {"a": float("nan")})
    assert not (tmp_path / "x.json").exists()


def test_csv_and_html(tmp_path):
    df = pd.DataFrame({"site": ["Hollin Reach"], "speed_kt": [21.4]})
    write_csv(tmp_path / "t.csv", df)
    assert pd.read_csv(tmp_path / "t.csv").equals(df)
    write_html_table(tmp_path / "t.html", df, "Arrivals", CAUTION)
    text = (tmp_path / "t.html").read_text()
    assert "Hollin Reach" in text and "Decision support only" in text


def test_new_product_dir_never_reuses(tmp_path):
    a = new_product_dir(tmp_path, "run")
    b = new_product_dir(tmp_path, "run")
    assert a != b and a.is_dir() and b.is_dir()
    assert b.name == "run-2"
