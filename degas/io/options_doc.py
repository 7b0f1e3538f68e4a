"""The reader options people need for real exports, as 'degas formats' lists them (CLI flag, mapping key)."""

from __future__ import annotations

READER_OPTIONS: tuple[tuple[str, str, str], ...] = (
    ("--kind KIND", "kind", "gas_flux, gas_ratio, extrusion_rate, erupted_volume, chronology, seismic_catalog, "
                            "event_counts (daily counts by class), amplitude, other"),
    ("--sheet NAME|N|all", "sheet", "workbook sheet (.xlsx, legacy .xls); 'all' stacks sheets of one layout"),
    ("--station ID", "station", "station id; overrides a station column (the ingest says which it used)"),
    ("--time-col / --value-col", "[columns]", "name the time / value column when the header is not recognised"),
    ("--time-origin DATE --time-unit D|h|s", "time_origin, time_unit", "numeric times counted from an origin"),
    ("--time-format FMT", "time_format", "iso, excel, unix, datenum (MATLAB), decimal_year, or a strftime pattern"),
    ("--accept-approximate-dates", "accept_approximate_dates",
     "keep '1830s', 'c. 1910', 'Early 1869' with a precision flag (rejected otherwise)"),
    ("--depth-positive up|down", "depth_positive", "catalogue depth sign (default down, below the datum)"),
    ("--tz ZONE", "timezone", "zone of naive or local times (needed for 'local time' columns)"),
    ("--map FILE", "[class_map], [state_map]", "local event codes -> classes; chronology states -> "
                                               "eruptive, pause, unknown"),
)


def options_lines() -> list[str]:
    """One line per option: the CLI flag, the mapping-file key and what it does."""
    return [f"  {flag:38s} {key:28s} {text}" for flag, key, text in READER_OPTIONS]
