"""Copy the real GRIB test cases of tests/real_data/grib/ out of the cfgrib source archive.

Run::

    python tests/real_data/make_grib_samples.py --cfgrib-sdist PATH/cfgrib-0.9.15.1.tar.gz

Writes into tests/real_data/grib/ only (``--out DIR`` to change), byte-for-byte
copies of whole GRIB messages; nothing is decoded or re-encoded, so every file
is as the producing centre wrote it. Needs the standard library only.

* ``era5_members_20170101_2an.grib``: the first 80 messages of
  ``tests/sample-data/era5-levels-members.grib`` (GRIB1, ECMWF ERA5 EDA,
  10 members, t and z at 850/500 hPa): the analyses of 2017-01-01 00 and
  12 UTC, every member. The whole file (160 messages, 2.36 MB) is over the
  folder's 1.5 MB limit for a copy.
* whole small files, each a trap or a bad input the loader must handle:
  ``reduced_gg.grib`` (a reduced Gaussian grid), ``hpa_and_pa.grib``
  (temperature on levels in hPa and in Pa), ``era5-levels-corrupted.grib``
  (a message whose length is wrong), ``uv_on_different_levels.grib`` (u and v
  not on the same levels), ``regular_gg_ml.grib`` (model levels, no pressure
  level), ``regular_ll_sfc.grib`` (a surface field only).
"""

import argparse
import hashlib
import tarfile
from pathlib import Path

ROOT = "cfgrib-0.9.15.1/tests/sample-data/"
WHOLE = (
    "reduced_gg.grib",
    "hpa_and_pa.grib",
    "era5-levels-corrupted.grib",
    "uv_on_different_levels.grib",
    "regular_gg_ml.grib",
    "regular_ll_sfc.grib",
)
ERA5 = "era5-levels-members.grib"
ERA5_OUT = "era5_members_20170101_2an.grib"
ERA5_MESSAGES = 80


def grib_messages(data):
    """Whole GRIB messages of ``data`` (editions 1 and 2), by their section-0 lengths."""
    out, pos = [], 0
    while True:
        pos = data.find(b"GRIB", pos)
        if pos < 0:
            return out
        edition = data[pos + 7]
        if edition == 1:
            length = int.from_bytes(data[pos + 4 : pos + 7], "big")
        else:
            length = int.from_bytes(data[pos + 8 : pos + 16], "big")
        msg = data[pos : pos + length]
        assert msg.endswith(b"7777"), f"message at {pos} does not end in 7777"
        out.append(msg)
        pos += length


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--cfgrib-sdist", required=True, type=Path)
    ap.add_argument("--out", type=Path, default=Path(__file__).parent / "grib")
    args = ap.parse_args(argv)
    args.out.mkdir(parents=True, exist_ok=True)
    with tarfile.open(args.cfgrib_sdist, "r:gz") as tar:
        for name in WHOLE:
            data = tar.extractfile(ROOT + name).read()
            (args.out / name).write_bytes(data)
            print(f"{name}: {len(data)} bytes, md5 {hashlib.md5(data).hexdigest()}")
        era5 = tar.extractfile(ROOT + ERA5).read()
    msgs = grib_messages(era5)
    assert len(msgs) == 160, len(msgs)
    data = b"".join(msgs[:ERA5_MESSAGES])
    (args.out / ERA5_OUT).write_bytes(data)
    print(f"{ERA5_OUT}: {ERA5_MESSAGES} of {len(msgs)} messages, {len(data)} bytes, "
          f"md5 {hashlib.md5(data).hexdigest()} (source md5 {hashlib.md5(era5).hexdigest()})")


if __name__ == "__main__":
    main()
