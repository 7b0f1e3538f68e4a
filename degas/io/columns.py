"""Column detection: which header holds the time, the values, their unit and uncertainty.

Headers are matched by name aliases in many spellings ("time", "Date", "datetime (UTC)",
"SO2 flux [t/d]", "so2_kg_s", "fecha_hora", ...). Units come from brackets or parentheses
in the header ("(t/d)", "[kg s-1]") or from unit-like suffixes of snake_case names
("so2_kg_s", "flux_tpd"). An explicit mapping (CLI options or a TOML file) always wins.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field

from degas.model import GAS_SPECIES

ROLES = (
    "time", "end", "value", "uncertainty", "quality", "station", "state", "style", "note",
    "latitude", "longitude", "depth", "magnitude", "magnitude_type", "event_class", "event_id", "location",
)

# Aliases are compared after normalisation: lower case, units removed, separators -> single space.
ALIASES: dict[str, tuple[str, ...]] = {
    "time": ("time", "date", "datetime", "date time", "date/time", "timestamp", "utc", "time utc",
             "datetime utc", "date utc", "t", "epoch", "fecha", "fecha hora", "hora fecha", "datum",
             "zeit", "origin time", "origintime", "event time", "survey date", "survey", "date of survey",
             "sample time", "scan time", "start time", "period start", "period start utc", "periodstart",
             "periodstart utc", "date utc time", "date localtime", "date local time", "local time", "localtime",
             "date local", "datetime local", "day", "date day", "decimal year", "decyear", "dec year",
             "year decimal", "datenum", "matlab datenum", "matlab time", "days", "day number", "hours", "seconds"),
    "end": ("end", "end time", "end date", "stop", "until", "to", "fin", "finish", "end utc"),
    "start": ("start", "start date", "begin", "beginning", "from", "onset", "inicio", "start utc"),
    "uncertainty": ("uncertainty", "error", "err", "unc", "sigma", "1 sigma", "1sigma", "sd", "std", "stdev",
                    "std dev", "standard deviation", "flux error", "flux err", "error bar", "±", "+/-"),
    "quality": ("quality", "qc", "qc flag", "flag", "flags", "quality flag", "calidad", "qualitat", "status"),
    "station": ("station", "sta", "site", "instrument", "station code", "estacion", "stn"),
    "state": ("state", "activity", "phase", "eruptive state", "regime", "actividad"),
    "style": ("style", "eruptive style", "eruption style", "mode", "estilo"),
    "location": ("location", "vent", "crater", "locality", "sector", "eruption site", "vent location", "lugar",
                 "ubicacion"),
    "note": ("note", "notes", "remark", "remarks", "comment", "comments", "description", "observaciones"),
    "latitude": ("latitude", "lat", "lat deg", "latitude deg"),
    "longitude": ("longitude", "lon", "long", "lng", "lon deg", "longitude deg"),
    "depth": ("depth", "dep", "depth km", "depth m", "profundidad", "z"),
    "magnitude": ("magnitude", "mag", "ml", "md", "mw", "mb", "ms", "mc", "mlv", "mww", "mwc", "mwr", "magnitud"),
    "magnitude_type": ("magnitude type", "mag type", "magtype", "magnitudetype", "mag_type", "type of magnitude"),
    "event_class": ("type", "class", "event type", "event class", "eventtype", "type code", "code", "clase",
                    "tipo", "classification", "volcanic class", "event code", "etype", "evtype", "ev type",
                    "event category"),
    "event_id": ("id", "event id", "eventid", "evid", "event", "public id", "publicid", "event_id"),
}

MAGNITUDE_TYPE_HEADERS = {"ml": "ML", "md": "Md", "mw": "Mw", "mb": "mb", "ms": "Ms", "mc": "Mc", "mlv": "MLv",
                          "mww": "Mww", "mwc": "Mwc", "mwr": "Mwr"}

# snake_case unit suffixes ("so2_kg_s") -> unit spellings
SUFFIX_UNITS: tuple[tuple[str, str], ...] = (
    (r"(?:^|_)kg_?s$", "kg/s"), (r"(?:^|_)kg_?s_?1$", "kg/s"), (r"(?:^|_)t_?d$", "t/d"), (r"(?:^|_)tpd$", "t/d"),
    (r"(?:^|_)t_?day$", "t/d"), (r"(?:^|_)g_?s$", "g/s"), (r"(?:^|_)kt_?d$", "kt/d"), (r"(?:^|_)m3_?s$", "m^3/s"),
    (r"(?:^|_)m3_?d$", "m^3/d"), (r"(?:^|_)mm3$", "Mm3"), (r"(?:^|_)m3$", "m^3"), (r"(?:^|_)km3$", "km^3"),
    (r"(?:^|_)km$", "km"), (r"(?:^|_)ppm$", "ppm"),
)

_BRACKET = re.compile(r"[\(\[\{]([^\)\]\}]*)[\)\]\}]")


@dataclass(frozen=True)
class Header:
    """A header split into a normalised name, its unit text (if any) and its other bracket words."""

    raw: str
    name: str
    unit: str | None
    tags: tuple[str, ...] = field(default=())

    @property
    def words(self) -> str:
        return " ".join((self.name, *self.tags)).lower()


def split_header(raw: str) -> Header:
    """Split "SO2 flux (t/d)" into name "so2 flux" and unit "t/d"; "so2_kg_s" into "so2", "kg/s"."""
    text = str(raw).strip().lstrip("\ufeff")
    unit = None
    tags: list[str] = []
    for inner in _BRACKET.findall(text):
        inner_s = inner.strip()
        if _is_unit_text(inner_s):
            unit = unit or _clean_unit(inner_s)
        else:
            # "(Mm3, bulk)" -> unit Mm3, tag bulk
            parts = [p.strip() for p in re.split(r"[,;]", inner_s) if p.strip()]
            for p in parts:
                if unit is None and _is_unit_text(p):
                    unit = _clean_unit(p)
                else:
                    tags.append(p.lower())
            if unit is None and len(parts) == 1 and not _is_tag(parts[0]):
                unit = parts[0]  # an unrecognised unit: let the unit parser say what it accepts
    if unit is not None:
        for word in ("DRE", "dre", "bulk", "Bulk", "BULK"):
            if re.search(rf"\b{word}\b", unit):
                unit = re.sub(rf"\s*\b{word}\b\s*", " ", unit).strip()
                tags.append(word.lower())
    name = _BRACKET.sub(" ", text)
    name_l = name.strip().lower()
    if unit is None:
        snake = re.sub(r"[\s\-]+", "_", name_l)
        for pattern, u in SUFFIX_UNITS:
            m = re.search(pattern, snake)
            if m and m.start() > 0:
                unit = u
                name_l = snake[: m.start()].replace("_", " ")
                break
    name_n = re.sub(r"[_\-\.:]+", " ", name_l)
    name_n = re.sub(r"\s+", " ", name_n).strip()
    return Header(text, name_n, unit, tuple(tags))


_UNITISH = re.compile(
    r"^(?:[a-zA-Zµ³²°%/\*\^\-\s\d\.·]+)$"
)
_UNIT_WORDS = re.compile(
    r"(?:^|[\s/\*\^\d·(])(?:t|kt|Mt|Mg|kg|g|s|d|day|h|hr|min|m|km|Mm|m3|m³|Mm3|km3|ppm|mol|%|tpd|yr|counts?|"
    r"nm/s|um/s|µm/s|m/s|mm/s|Hz|J|N)(?:$|[\s/\*\^\-\d³²·)])"
)
_NOT_UNITS = {"utc", "local", "bulk", "dre", "molar", "mol/mol", "mass", "1 sigma", "gmt"}


def _is_tag(s: str) -> bool:
    low = s.lower().strip()
    return (low in _NOT_UNITS or low.startswith("utc") or low.startswith("local") or "sigma" in low
            or low in ("molar", "mass", "mass ratio", "molar ratio", "raw", "corrected"))


def _is_unit_text(s: str) -> bool:
    low = s.lower().strip()
    if low in _NOT_UNITS or low.startswith("utc") or re.fullmatch(r"utc[+-]\d+(:\d\d)?", low):
        return low == "mol/mol"
    if low in ("mol/mol",):
        return True
    return bool(_UNITISH.match(s)) and bool(_UNIT_WORDS.search(" " + s + " "))


def _clean_unit(s: str) -> str:
    return s.strip().replace(" per ", "/")


def species_in(text: str) -> list[str]:
    """Gas species named in a header, in order of appearance ("CO2/SO2" -> ["CO2", "SO2"])."""
    found = []
    for m in re.finditer(r"(?<![a-z0-9])(so2|co2|h2s|h2o|hcl|hf)(?![a-z0-9])", text.lower()):
        sp = next(s for s in GAS_SPECIES if s.lower() == m.group(1))
        found.append(sp)
    return found


def normalise_alias(text: str) -> str:
    return re.sub(r"\s+", " ", re.sub(r"[_\-\.:]+", " ", text.lower())).strip()


def match_role(header: Header, role: str) -> bool:
    """True when the header's name is one of the aliases of ``role``."""
    aliases = ALIASES.get(role, ())
    name = header.name
    if name in aliases or name.replace(" ", "") in {a.replace(" ", "") for a in aliases}:
        return True
    return False


def guess_kind(header: Header) -> str | None:
    """The kind of quantity a value column holds, from its words and unit (None = cannot tell)."""
    w = header.words
    sp = species_in(w)
    if "ratio" in w or len(sp) >= 2 or re.search(r"\b(co2|h2s|h2o)\s*/\s*(so2|st|s)\b", w):
        return "gas_ratio"
    if re.search(r"\b(rsam|ssam|amplitude|rms|tremor amplitude|dsar)\b", w):
        return "amplitude"
    if re.search(r"\b(extrusion|effusion|discharge|eruption rate|output rate|tadr|mor)\b", w):
        return "extrusion_rate"
    if re.search(r"\b(volume|cumulative|vol)\b", w):
        return "erupted_volume"
    if sp or re.search(r"\b(flux|emission|emission rate)\b", w):
        return "gas_flux"
    if header.unit:
        from degas.units import same_dimension

        if same_dimension(header.unit, "kg/s"):
            return "gas_flux"
        if same_dimension(header.unit, "m^3/s"):
            return "extrusion_rate"
        if same_dimension(header.unit, "m^3"):
            return "erupted_volume"
    return None


def volume_basis_in(header: Header) -> str | None:
    w = header.words
    if re.search(r"\bdre\b|dense rock", w):
        return "dre"
    if re.search(r"\bbulk\b", w):
        return "bulk"
    return None


# --------------------------------------------------------------------------- melt-inclusion tables (issue 14)

#: Header aliases of the descriptive columns of a melt-inclusion table (kind ``melt_inclusions``).
INCLUSION_ALIASES: dict[str, tuple[str, ...]] = {
    "sample_id": ("sample", "sample id", "sample name", "sample no", "specimen", "sample code", "muestra"),
    "analysis_id": ("analysis id", "spot", "spot id", "inclusion", "inclusion id", "mi", "mi id", "point",
                    "analysis no", "id", "label", "name"),
    "phase": ("phase", "eruption phase", "eruptive phase", "episode", "eruption", "stage", "fase"),
    "time": ("date", "eruption date", "sample date", "sampling date", "collected", "date collected", "time",
             "datetime", "erupted", "fecha"),
    "host": ("host", "host mineral", "mineral", "host phase", "phenocryst", "crystal"),
    "analysis_type": ("type", "analysis type", "material", "glass type", "kind of analysis", "setting", "context",
                      "tipo"),
}

#: Volatile names in headers ("H2O", "H2Ot", "CO2", "S", "sulfur", "SO3", "Cl", "chlorine").
INCLUSION_VOLATILE_WORDS: dict[str, tuple[str, ...]] = {
    "h2o": ("h2o", "h2ot", "h2o t", "water", "h2o total"),
    "co2": ("co2", "co2t", "co2 total", "carbon dioxide"),
    "s": ("s", "sulfur", "sulphur", "s total", "st", "so3"),
    "cl": ("cl", "chlorine"),
}
#: Words that mark a 1-sigma column ("H2O 1σ", "co2_sd", "S err").
SIGMA_WORDS = ("sd", "1sd", "1 sd", "2sd", "2sigma", "sigma", "1 sigma", "1sigma", "1σ", "σ", "err", "error", "unc",
               "uncertainty", "±", "+/-", "stdev", "std", "s d")


def inclusion_column(header: Header) -> tuple[str, str] | None:
    """What a melt-inclusion table column holds: ("volatile", "h2o"), ("sigma", "co2"), ("oxide", "SiO2"),
    ("total", ""), (role, "") for the descriptive roles, or None."""
    from degas.model import OXIDES

    name = header.name.replace("σ", " σ").strip()
    words = name.split()
    for role, aliases in INCLUSION_ALIASES.items():
        if name in aliases:
            return role, ""
    if name in ("total", "sum", "oxide total", "total oxides", "analytical total"):
        return "total", ""
    sigma = any(w in SIGMA_WORDS for w in words) or any(t in SIGMA_WORDS or "sigma" in t for t in header.tags)
    core = " ".join(w for w in words if w not in SIGMA_WORDS and w not in ("1", "2"))
    for vol, names in INCLUSION_VOLATILE_WORDS.items():
        if core in names:
            return ("sigma", vol) if sigma else ("volatile", vol)
    oxide_names = {o.lower(): o for o in OXIDES}
    oxide_names.update({"feot": "FeO", "feo t": "FeO", "feo*": "FeO", "feo total": "FeO", "fe2o3t": "Fe2O3"})
    if core in oxide_names and not sigma:
        return "oxide", oxide_names[core]
    return None


_INCLUSION_UNIT_TAIL = re.compile(r"\s+(wt\s*\.?\s*%|ppm|mg/kg|[µu]g/g)$")


def split_inclusion_header(raw: str) -> Header:
    """:func:`split_header`, also taking a bare trailing unit of analyses ("H2O wt%", "CO2 mg/kg", "S µg/g")."""
    h = split_header(raw)
    if h.unit is None:
        m = _INCLUSION_UNIT_TAIL.search(h.name)
        if m and m.start() > 0:
            unit = re.sub(r"\s+", "", m.group(1)).replace("wt.%", "wt%")
            return Header(h.raw, h.name[: m.start()].strip(), unit, h.tags)
    return h


def sigma_multiple(header: Header) -> int:
    """2 when a 1-sigma-like header says 2 sigma ("H2O 2σ", "CO2 2sd", "S (2 s.d.)"), else 1."""
    text = " ".join((header.name.replace("σ", " σ"), *header.tags))
    return 2 if re.search(r"(?<![\d.])2\s*(σ|sigma|sd|s\s*d|s\.d\.|se|stdev|std)\b|(?<![\d.])2\s*σ", text) else 1
