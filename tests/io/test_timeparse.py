"""Time formats seen in monitoring exports -> UTC."""

from __future__ import annotations

import pandas as pd
import pytest

from degas.errors import DegasError
from degas.io.timeparse import parse_times

UTC = pd.Timestamp


def t(s: str) -> pd.Timestamp:
    return pd.Timestamp(s, tz="UTC")


def test_iso_with_offsets_and_z():
    p = parse_times(pd.Series(["2024-03-01T06:10:00-05:00", "2024-03-01T11:10:00Z", "2024-03-01T12:10:00+01:00"]))
    assert list(p.times) == [t("2024-03-01 11:10")] * 3
    assert p.assumptions == ()


def test_naive_iso_is_utc_and_says_so():
    p = parse_times(pd.Series(["2024-03-01 11:10", "2024-03-01T11:20:30"]))
    assert list(p.times) == [t("2024-03-01 11:10"), t("2024-03-01 11:20:30")]
    assert any("UTC" in a for a in p.assumptions)


def test_naive_times_in_a_stated_zone():
    p = parse_times(pd.Series(["2024-01-15 07:00"]), timezone="-05:00")
    assert p.times.iloc[0] == t("2024-01-15 12:00")
    p = parse_times(pd.Series(["2024-07-15 07:00"]), timezone="Europe/Madrid")  # CEST = UTC+2 in July
    assert p.times.iloc[0] == t("2024-07-15 05:00")


def test_dayfirst():
    p = parse_times(pd.Series(["03/04/2024 10:00", "13/04/2024 10:00"]), dayfirst=True)
    assert list(p.times) == [t("2024-04-03 10:00"), t("2024-04-13 10:00")]


def test_excel_serial_days():
    # Excel 1900 date system: serial 45292 is 2024-01-01 (day 0 = 1899-12-30 after the 1900 leap-year bug)
    p = parse_times(pd.Series([45292, 45292.5]), time_format="excel")
    assert list(p.times) == [t("2024-01-01"), t("2024-01-01 12:00")]


def test_decimal_years():
    p = parse_times(pd.Series([2024.0, 2024.5]), time_format="decimal_year")
    # 2024 is a leap year: half of 366 days is 183 days -> 2 July 00:00
    assert list(p.times) == [t("2024-01-01"), t("2024-07-02")]


def test_unix_seconds_detected():
    p = parse_times(pd.Series(["1704067200", "1704067260"]))
    assert list(p.times) == [t("2024-01-01 00:00"), t("2024-01-01 00:01")]
    assert any("unix" in a for a in p.assumptions)


def test_bad_cells_become_nat_not_errors():
    p = parse_times(pd.Series(["2024-01-01", "yesterday", None, ""]))
    assert p.times.iloc[0] == t("2024-01-01")
    assert p.times.iloc[1:].isna().all()


def test_mixed_naive_and_offset_cells_naive_ones_take_the_stated_zone():
    p = parse_times(pd.Series(["2024-01-01T00:00Z", "2024-01-01T01:00"]))
    assert list(p.times) == [t("2024-01-01"), t("2024-01-01 01:00")]
    assert any("UTC" in a for a in p.assumptions)
    p = parse_times(pd.Series(["2024-01-01T00:00Z", "2024-01-01T01:00"]), timezone="+01:00")
    assert list(p.times) == [t("2024-01-01"), t("2024-01-01 00:00")]


def test_unknown_format_name():
    with pytest.raises(DegasError, match="unknown time format"):
        parse_times(pd.Series(["x"]), time_format="julian")


def test_native_datetimes_pass_through():
    s = pd.Series(pd.to_datetime(["2024-01-01 10:00"]))
    p = parse_times(s, timezone="UTC")
    assert p.times.iloc[0] == t("2024-01-01 10:00")
