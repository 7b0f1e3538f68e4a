"""Reader options from a TOML mapping file (or a table of one), overriding detection.

A mapping file holds the fields of :class:`~degas.io.base.ReadOptions` at top level::

    kind = "gas_flux"
    species = "SO2"
    station = "VLM-S"
    timezone = "UTC"
    dayfirst = true
    [columns]           # role = "header in the file"
    time = "fecha_hora"
    value = "SO2_kg_s"
    [units]             # role = "unit"
    value = "kg/s"
    [class_map]         # local event code = class
    "Hyb" = "hybrid"

A project file may hold several as ``[[file]]`` tables, each with a ``path``.
"""

from __future__ import annotations

import dataclasses
import tomllib
from pathlib import Path

from degas.errors import ConfigError
from degas.io.base import ReadOptions
from degas.io.columns import ROLES
from degas.io.timebase import TIME_UNITS, origin_time
from degas.model import ERUPTIVE_STATES, EVENT_CLASSES, KINDS

_FIELDS = {f.name for f in dataclasses.fields(ReadOptions)}
_DICT_FIELDS = {"columns", "units", "class_map", "state_map"}
_TEXT_FIELDS = {"kind", "species", "station", "timezone", "time_format", "volume_basis", "magnitude_type",
                "time_origin", "time_unit", "depth_positive"}
_BOOL_FIELDS = {"dayfirst", "allow_negative", "accept_approximate_dates"}


def options_from_dict(d: dict, where: str = "mapping") -> ReadOptions:
    """Validate a dict of option values and build ReadOptions; unknown keys are an error."""
    unknown = sorted(set(d) - _FIELDS - {"path", "format"})
    if unknown:
        valid = ", ".join(sorted(_FIELDS | {"path", "format"}))
        raise ConfigError(f"{where}: unknown option(s) {unknown}; valid: {valid}")
    clean = {k: v for k, v in d.items() if k in _FIELDS}
    for k in sorted(_TEXT_FIELDS & set(clean)):
        problem = option_problem(k, clean[k])
        if problem:
            raise ConfigError(f"{where}: {k} {problem}")
    for k in _BOOL_FIELDS & set(clean):
        if not isinstance(clean[k], bool):
            raise ConfigError(f"{where}: {k} must be true or false, got {clean[k]!r:.60}")
    for k in _DICT_FIELDS & set(clean):
        if not isinstance(clean[k], dict):
            raise ConfigError(f"{where}: [{k}] must be a table")
        clean[k] = {str(a): str(b) for a, b in clean[k].items()}
    if "kind" in clean and clean["kind"] not in KINDS:
        raise ConfigError(f"{where}: unknown kind {clean['kind']!r}; valid kinds: {', '.join(KINDS)}")
    bad_roles = sorted(set(clean.get("columns", {})) - set(ROLES))
    if bad_roles:
        raise ConfigError(f"{where}: unknown column role(s) {bad_roles}; valid roles: {', '.join(ROLES)}")
    bad_cls = sorted({v for v in clean.get("class_map", {}).values() if v not in EVENT_CLASSES})
    if bad_cls:
        raise ConfigError(f"{where}: unknown event class(es) {bad_cls}; valid: {', '.join(EVENT_CLASSES)}")
    if "sheet" in clean:
        clean["sheet"] = str(clean["sheet"])
    bad_states = sorted({v for v in clean.get("state_map", {}).values() if v not in ERUPTIVE_STATES})
    if bad_states:
        raise ConfigError(f"{where}: unknown state(s) {bad_states} in [state_map]; valid: {', '.join(ERUPTIVE_STATES)}")
    for k in ("vesicularity", "bulk_density", "dense_density"):
        if k in clean:
            try:
                clean[k] = float(clean[k])
            except (TypeError, ValueError):
                raise ConfigError(f"{where}: {k} must be a number") from None
    try:
        return ReadOptions(**clean)
    except TypeError as exc:
        raise ConfigError(f"{where}: {exc}") from None
    except ConfigError as exc:  # a value out of its range (ReadOptions checks them)
        raise ConfigError(f"{where}: {exc}") from None


def option_problem(key: str, value) -> str | None:
    """What is wrong with the value of the text option ``key`` ("must be ...", without naming it), or None.

    One rule set for mapping files (which name the key) and the command line (which names the option).
    """
    if not isinstance(value, str) or not value.strip() or len(value) > 1000:
        return f"must be non-empty text (at most 1000 characters), got {value!r:.60}"
    if key == "depth_positive" and value not in ("up", "down"):
        return f'must be "up" or "down", got {value!r:.60}'
    if key == "time_unit" and value not in TIME_UNITS:
        return f"must be D (days), h (hours) or s (seconds), got {value!r:.60}"
    if key == "time_origin" and origin_time(value) is None:
        return f"must be a date such as 1995-01-01 (a time and UTC offset may follow), got {value!r:.60}"
    return None


def load_toml(path: str | Path) -> dict:
    path = Path(path)
    try:
        data = tomllib.loads(path.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise ConfigError(f"{path}: mapping file not found") from None
    except tomllib.TOMLDecodeError as exc:
        raise ConfigError(f"{path}: not valid TOML ({' '.join(str(exc).split())})") from None
    except UnicodeDecodeError as exc:
        raise ConfigError(f"{path}: not UTF-8 text, as TOML must be (byte {exc.start})") from None
    except RecursionError:
        raise ConfigError(f"{path}: nested more deeply than degas reads") from None
    except IsADirectoryError:
        raise ConfigError(f"{path}: is a folder, not a TOML file") from None
    if _depth(data) > MAX_TOML_DEPTH:
        raise ConfigError(f"{path}: nested more than {MAX_TOML_DEPTH} levels deep; degas files use at most 3")
    return data


MAX_TOML_DEPTH = 8


def _depth(x, level: int = 0) -> int:
    """Nesting depth of tables and arrays (stops counting past MAX_TOML_DEPTH)."""
    if level > MAX_TOML_DEPTH:
        return level
    if isinstance(x, dict):
        return max((_depth(v, level + 1) for v in x.values()), default=level + 1)
    if isinstance(x, list):
        return max((_depth(v, level + 1) for v in x), default=level + 1)
    return level


def load_mapping(path: str | Path) -> ReadOptions:
    """ReadOptions from a single-file mapping TOML."""
    return options_from_dict(load_toml(path), str(path))


def merge_options(base: ReadOptions, **overrides) -> ReadOptions:
    """``base`` with every override that is not None (dict overrides are merged key by key)."""
    changes = {}
    for k, v in overrides.items():
        if v is None or v == {}:
            continue
        if k in _DICT_FIELDS:
            changes[k] = {**getattr(base, k), **v}
        else:
            changes[k] = v
    return dataclasses.replace(base, **changes)
