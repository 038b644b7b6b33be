"""The per-user copy of the Earth-orientation table: used when it matches, rebuilt when not."""

import numpy as np
import pytest

from contactplan import data
from contactplan.timescale import format_utc, parse_utc


@pytest.fixture
def fresh(tmp_path, monkeypatch):
    monkeypatch.setenv("CONTACTPLAN_CACHE_DIR", str(tmp_path))
    data.eop_table.cache_clear()
    yield tmp_path
    data.eop_table.cache_clear()


def _parsed():
    return data._parse_finals(data._iers_dir() / "finals2000A.all")


def test_cached_table_equals_the_parsed_file_bit_for_bit(fresh):
    first = data.eop_table()  # parses and writes the copy
    assert data._eop_cache_path().exists()
    data.eop_table.cache_clear()
    again = data.eop_table()  # from the copy
    ref = _parsed()
    for key in ref:
        np.testing.assert_array_equal(first[key], ref[key])
        np.testing.assert_array_equal(again[key], ref[key])
    assert ref["mjd_utc"].size > 10000  # daily values over decades (IERS finals2000A.all; common practice)


@pytest.mark.parametrize("damage", ["truncate", "flip", "stale"])
def test_damaged_or_stale_copy_is_rebuilt_quietly(fresh, damage):
    data.eop_table()
    path = data._eop_cache_path()
    raw = bytearray(path.read_bytes())
    if damage == "truncate":
        raw = raw[: len(raw) // 2]
    elif damage == "flip":
        raw[-100] ^= 0xFF
    else:  # names another version of the source file
        raw = raw.replace(b'"size": ', b'"size": 1', 1)
    path.write_bytes(bytes(raw))
    assert data._eop_cache_load({"format": "other"}) is None
    data.eop_table.cache_clear()
    tab = data.eop_table()
    np.testing.assert_array_equal(tab["ut1_minus_utc_s"], _parsed()["ut1_minus_utc_s"])
    data.eop_table.cache_clear()
    assert data._eop_cache_load(_key()) is not None  # rewritten


def _key():
    st = (data._iers_dir() / "finals2000A.all").stat()
    return {"format": data.EOP_CACHE_FORMAT, "source": str(data._iers_dir() / "finals2000A.all"),
            "size": st.st_size, "mtime_ns": st.st_mtime_ns}


def test_array_formatting_equals_the_scalar_path_across_a_leap_second():
    # 2016-12-31T23:59:60 UTC was a leap second (IERS Bulletin C 52)
    t0 = parse_utc("2016-12-31T23:59:58Z")
    t = t0 + np.array([0.0, 1.0, 1.9996, 2.0, 2.25, 2.9999, 3.0, 86400.0 * 45.5, 1e8 + 0.123456])
    for decimals in (0, 3, 6):
        for doy in (False, True):
            assert format_utc(t, decimals, doy) == [format_utc(float(x), decimals, doy) for x in t]
    assert format_utc(t[2:5])[1:] == ["2016-12-31T23:59:60.000Z", "2016-12-31T23:59:60.250Z"]
    assert format_utc(np.zeros(0)) == []
