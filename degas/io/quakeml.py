"""QuakeML 1.2 (BED and BED-RT; also 1.0 and 1.1 namespaces) seismic catalogues -> :class:`degas.model.EventCatalog`.

Structure as summarised in REFERENCES.md section 4.1 (QuakeML BED 1.2, 2013; the specification
document itself was not opened). The file is parsed in a single streaming pass with defusedxml
(DTDs, entity declarations and external references are refused, so "billion laughs" and
external-entity documents fail with one line), keeping only the current event in memory; no
element tree is built.

Rules
-----
* Elements are looked up by ``{namespace}local-name``: the BED namespace
  ``http://quakeml.org/xmlns/bed/1.2`` and the real-time ``http://quakeml.org/xmlns/bed-rt/1.2``
  are both accepted; elements and attributes of any other namespace are ignored.
* Preferred origin: the origin whose ``publicID`` equals ``preferredOriginID``, else the first
  origin; the same for the magnitude. An event without an origin, or whose chosen origin has no
  time, is rejected (reported with the line of its ``<event>`` start tag).
* Depth is in metres in QuakeML (positive down) and is kept as it is. A missing magnitude gives a
  NaN magnitude; the event is kept.
* Event class: the label is the event ``type`` (any string is accepted, standard or not, e.g.
  "earthquake", "LP", "volcano-tectonic"). It is replaced by a *local code* when the stripped
  text of an event-level ``description/text`` or, failing that, of an event-level
  ``comment/text`` matches a class alias exactly (user class map or
  :data:`degas.io.event_classes.DEFAULT_CLASS_ALIASES`; case-, space- and
  punctuation-insensitive). Descriptions whose type is a place name ("region name",
  "Flinn-Engdahl region", "nearest cities"; EventDescriptionType values from memory) are never
  used. Descriptions are tried before comments, each in document order; the first match wins.
  Rationale: observatories that must write schema-valid QuakeML put "earthquake" or
  "other event" in ``type`` and their volcanic code in a description or comment, so the local
  code is the more specific label. ``source_type`` holds the label actually used.
* Events are read where the schema puts them (``eventParameters/event``). Times must be full
  ISO 8601 date-times within 1677-2262 (the range of nanosecond timestamps); a publicID seen a
  second time is rejected in favour of the first.
"""

from __future__ import annotations

import re
from collections.abc import Callable
from pathlib import Path

import numpy as np
from defusedxml import DefusedXmlException
from defusedxml.ElementTree import DefusedXMLParser, ParseError

from degas.errors import InputError
from degas.io.base import ReadOptions, ReadResult, make_provenance, rejects_frame
from degas.io.event_classes import (
    CatalogColumns,
    build_catalog,
    finish_notes,
    lookup_class,
    resolve_class_map,
)
from degas.model import EventCatalog, SeriesMeta

READER = "seismic_catalog/quakeml"
QUAKEML_NS = "http://quakeml.org/xmlns/quakeml/1.2"
QUAKEML_RT_NS = "http://quakeml.org/xmlns/quakeml-rt/1.2"
# QuakeML 1.0/1.1 documents (namespace URIs from memory): the elements degas reads are the same; in 1.0 the
# BED elements may sit in the quakeml/1.0 namespace itself, so that namespace is read as BED too.
OLD_NAMESPACES = ("http://quakeml.org/xmlns/quakeml/1.0", "http://quakeml.org/xmlns/bed/1.0",
                  "http://quakeml.org/xmlns/quakeml/1.1", "http://quakeml.org/xmlns/bed/1.1")
BED_NAMESPACES = ("http://quakeml.org/xmlns/bed/1.2", "http://quakeml.org/xmlns/bed-rt/1.2", *OLD_NAMESPACES)
_ROOT_NAMESPACES = (QUAKEML_NS, QUAKEML_RT_NS, *BED_NAMESPACES)
_CHUNK = 1 << 20


class _Node:
    """A place in the QuakeML tree that matters: child nodes by local name, and what to do there.

    ``opens`` names a container started at this element (event, origin, magnitude, description);
    ``leaf`` names the field that receives this element's text.
    """

    __slots__ = ("children", "leaf", "opens")

    def __init__(self, children: dict[str, _Node] | None = None, *, leaf: str | None = None, opens: str | None = None):
        self.children = children or {}
        self.leaf = leaf
        self.opens = opens


def _value(field: str) -> _Node:
    return _Node({"value": _Node(leaf=field)})


# Paths below <event> that are read; everything else (picks, arrivals, amplitudes, station
# magnitudes, origin comments, foreign elements, ...) is skipped without looking inside.
_EVENT = _Node(
    {
        "preferredOriginID": _Node(leaf="pref_origin"),
        "preferredMagnitudeID": _Node(leaf="pref_mag"),
        "type": _Node(leaf="type"),
        "typeCertainty": _Node(leaf="type_certainty"),
        "description": _Node({"text": _Node(leaf="desc_text"), "type": _Node(leaf="desc_type")}, opens="description"),
        "comment": _Node({"text": _Node(leaf="comment")}),
        "creationInfo": _Node({"agencyID": _Node(leaf="agency")}),
        "origin": _Node(
            {
                "time": _value("time"),
                "latitude": _value("latitude"),
                "longitude": _value("longitude"),
                "depth": _value("depth"),
            },
            opens="origin",
        ),
        "magnitude": _Node({"mag": _value("mag"), "type": _Node(leaf="mag_type")}, opens="magnitude"),
    },
    opens="event",
)
_EVENT_PARAMETERS = _Node({"event": _EVENT, "creationInfo": _Node({"agencyID": _Node(leaf="catalog_agency")})})
_DOCUMENT = _Node({"eventParameters": _EVENT_PARAMETERS})
#: EventDescriptionType values that hold place names, never a local event code.
_PLACE_DESCRIPTIONS = frozenset(("region name", "flinn-engdahl region", "nearest cities"))
_ORIGIN_FIELDS = frozenset(("time", "latitude", "longitude", "depth"))
_MAG_FIELDS = frozenset(("mag", "mag_type"))
_DESC_FIELDS = frozenset(("desc_text", "desc_type"))


_PROLOG = re.compile(rb"\s*(?:<\?.*?\?>|<!--.*?-->|<!DOCTYPE[^\[>]*(?:\[.*?\])?\s*>)", re.DOTALL | re.IGNORECASE)
_ROOT_TAG = re.compile(rb"<(?:[A-Za-z_][\w.-]*:)?(?:quakeml|eventParameters)[\s>/]")


def is_quakeml(head: bytes, path: Path) -> bool:
    """True when ``head`` (the first bytes of the file) starts a QuakeML 1.2 document.

    The first element after the prolog (XML declaration, comments, processing instructions, a
    DOCTYPE) must be ``quakeml`` or ``eventParameters``, and a QuakeML namespace URI must appear in
    the head. Documents with a DTD are accepted here so that the reader can refuse them with a
    clear message. Never raises.
    """
    try:
        text = head
        if text[:2] in (b"\xff\xfe", b"\xfe\xff"):  # UTF-16 with BOM
            text = text.decode("utf-16", errors="ignore").encode("utf-8", errors="ignore")
        text = text.removeprefix(b"\xef\xbb\xbf")
        pos = 0
        while m := _PROLOG.match(text, pos):
            if m.end() == pos:
                break
            pos = m.end()
        rest = text[pos:].lstrip()
        if not _ROOT_TAG.match(rest):
            return False
        return b"quakeml.org/xmlns/quakeml/" in text or any(ns.encode() in text for ns in BED_NAMESPACES)
    except Exception:  # noqa: BLE001 - a detector must never raise
        return False


class _NotQuakeML(Exception):
    pass


class _Handler:
    """Expat callbacks: a stack of tree nodes (None inside skipped subtrees) and the current event."""

    def __init__(self, expat, on_event: Callable[[dict], None]) -> None:
        self.expat = expat
        self.on_event = on_event
        self.stack: list[_Node | None] = []
        self.names: dict[str, str | None] = {}
        self.ev: dict | None = None
        self.buf: list[str] | None = None
        self.catalog_agency: str | None = None

    def _local(self, tag: str) -> str | None:
        ns, _, name = tag.rpartition("}")
        local = name if ns in BED_NAMESPACES else None
        self.names[tag] = local
        return local

    def start(self, tag: str, attrs: list) -> None:
        stack = self.stack
        if not stack:  # the root element
            ns, _, name = tag.rpartition("}")
            if ns not in _ROOT_NAMESPACES:
                shown = f"{{{ns}}}{name}" if ns else name
                raise _NotQuakeML(f"root element is {shown}, not QuakeML (1.0-1.2) quakeml or eventParameters")
            stack.append(_EVENT_PARAMETERS if name == "eventParameters" else _DOCUMENT)
            return
        parent = stack[-1]
        if parent is None:
            stack.append(None)
            return
        local = self.names[tag] if tag in self.names else self._local(tag)
        node = parent.children.get(local) if local is not None else None
        stack.append(node)
        if node is None:
            return
        opens = node.opens
        if opens is not None:
            if opens == "event":
                self.ev = {
                    "line": self.expat.CurrentLineNumber,
                    "id": _attr(attrs, "publicID"),
                    "origins": [],
                    "mags": [],
                    "desc": [],
                    "comment": [],
                }
            elif opens == "origin":
                self.ev["origins"].append({"id": _attr(attrs, "publicID")})
            elif opens == "magnitude":
                self.ev["mags"].append({"id": _attr(attrs, "publicID")})
            else:
                self.ev["desc"].append({})
        if node.leaf is not None:
            self.buf = []
            self.expat.CharacterDataHandler = self.buf.append

    def end(self, tag: str) -> None:
        node = self.stack.pop()
        if node is None:
            return
        if node.leaf is not None and self.buf is not None:
            text = "".join(self.buf).strip()
            self.buf = None
            self.expat.CharacterDataHandler = None
            self._store(node.leaf, text)
        elif node.opens == "event":
            ev, self.ev = self.ev, None
            self.on_event(ev)

    def _store(self, key: str, text: str) -> None:
        ev = self.ev
        if key == "catalog_agency":
            if self.catalog_agency is None and text:
                self.catalog_agency = text
        elif key in _ORIGIN_FIELDS:
            ev["origins"][-1].setdefault(key, text)
        elif key in _MAG_FIELDS:
            ev["mags"][-1].setdefault(key, text)
        elif key in _DESC_FIELDS:
            ev["desc"][-1].setdefault(key, text)
        elif key == "comment":
            ev["comment"].append(text)
        else:
            ev.setdefault(key, text)

    def close(self) -> None:
        return None


def _attr(attrs: list, name: str) -> str | None:
    """Value of an un-namespaced attribute from expat's ordered [name, value, ...] list."""
    for i in range(0, len(attrs), 2):
        if attrs[i] == name:
            return attrs[i + 1].strip()
    return None


def _parse(path: Path, on_event: Callable[[dict], None]) -> _Handler:
    """Stream the file through a defused expat parser; every failure becomes one InputError."""
    name = path.name
    parser = DefusedXMLParser(target=None, forbid_dtd=True, forbid_entities=True, forbid_external=True)
    expat = parser.parser
    handler = _Handler(expat, on_event)
    expat.StartElementHandler = handler.start
    expat.EndElementHandler = handler.end
    expat.CharacterDataHandler = None
    parser.target = parser._target = handler
    try:
        with open(path, "rb") as fh:
            for chunk in iter(lambda: fh.read(_CHUNK), b""):
                parser.feed(chunk)
        parser.close()
    except DefusedXmlException as exc:
        what = type(exc).__name__.replace("Forbidden", "")
        what = {
            "DTD": "a DTD",
            "Entities": "an entity declaration",
            "ExternalReference": "an external reference",
        }.get(what, what)
        raise InputError(
            name,
            f"refused: the document contains {what} (forbidden for safety)",
            line=expat.CurrentLineNumber,
        ) from None
    except ParseError as exc:
        line = getattr(exc, "position", (None, None))[0]
        msg = str(exc).split(":")[0]
        raise InputError(name, f"malformed XML ({msg})", line=line) from None
    except _NotQuakeML as exc:
        raise InputError(name, f"not a QuakeML document: {exc}", line=expat.CurrentLineNumber) from None
    except (ValueError, LookupError, UnicodeError) as exc:
        raise InputError(name, f"unreadable XML: {' '.join(str(exc).split())}", line=expat.CurrentLineNumber) from None
    except OSError as exc:
        raise InputError(name, f"cannot read file: {exc.strerror or exc}") from None
    return handler


def _choose(items: list[dict], wanted: str | None) -> tuple[dict | None, bool]:
    """The item whose id equals ``wanted``, else the first.

    The second value is True when that choice was a guess: a preferred ID was given but matched
    nothing, or none was given and there were several items to choose from.
    """
    if not items:
        return None, False
    if wanted:
        for it in items:
            if it.get("id") == wanted:
                return it, False
        return items[0], True
    return items[0], len(items) > 1


def _local_code(ev: dict, table: dict[str, str]) -> str | None:
    for d in ev["desc"]:
        text = d.get("desc_text")
        if text and (d.get("desc_type") or "").casefold() not in _PLACE_DESCRIPTIONS and lookup_class(text, table):
            return text
    for text in ev["comment"]:
        if text and lookup_class(text, table):
            return text
    return None


class _Collector:
    """Turns each finished event into one row of text columns, or one reject, as it is parsed."""

    def __init__(self, name: str, table: dict[str, str]) -> None:
        self.name, self.table = name, table
        self.cols: dict[str, list] = {
            k: [] for k in ("time", "lat", "lon", "depth", "mag", "mtype", "label", "id", "raw")
        }
        self.lines: list[int] = []
        self.rejects: list[tuple] = []
        self.n_events = self.fallback_origin = self.fallback_mag = self.overridden = self.no_id = 0
        self.agencies: set[str] = set()
        self.man_made: list[str] = []

    def add(self, ev: dict) -> None:
        self.n_events += 1
        name, cols = self.name, self.cols
        raw = f"<event publicID={ev['id']!r}>"
        origin, fell_o = _choose(ev["origins"], ev.get("pref_origin"))
        if origin is None:
            self.rejects.append((name, ev["line"], "origin", "event has no origin", raw))
            return
        if not origin.get("time"):
            self.rejects.append((name, ev["line"], "time", "chosen origin (preferred, else first) has no time", raw))
            return
        mag, fell_m = _choose(ev["mags"], ev.get("pref_mag"))
        self.fallback_origin += fell_o
        self.fallback_mag += fell_m
        label = ev.get("type")
        from degas.io.catalog_rules import is_man_made

        man_made = is_man_made(ev)
        if man_made:
            self.man_made.append(label or "")
            label = "anthropogenic event"  # never the volcanic explosion class
        code = _local_code(ev, self.table) if not man_made else None
        if code is not None and code != label:
            self.overridden += 1
            label = code
        if ev.get("agency"):
            self.agencies.add(ev["agency"])
        eid = ev["id"]
        if not eid:
            self.no_id += 1
            eid = f"{name}:line{ev['line']}"
        cols["time"].append(origin.get("time"))
        cols["lat"].append(origin.get("latitude"))
        cols["lon"].append(origin.get("longitude"))
        cols["depth"].append(origin.get("depth"))
        cols["mag"].append(mag.get("mag") if mag else None)
        cols["mtype"].append(mag.get("mag_type") if mag else None)
        cols["label"].append(label)
        cols["id"].append(eid)
        cols["raw"].append(raw)
        self.lines.append(ev["line"])


def read_quakeml(path: Path, options: ReadOptions) -> ReadResult:
    """Read a QuakeML 1.2 file into one EventCatalog (depth in metres, times UTC).

    Parameters
    ----------
    path : the QuakeML file.
    options : ReadOptions; ``station`` names the catalogue, ``class_map`` maps local event-type
        codes to classes, ``magnitude_type`` fills missing magnitude types.

    Returns
    -------
    ReadResult
        ``records`` = [EventCatalog]; events without an origin or origin time in ``rejects``
        (with the line of the ``<event>`` tag).

    Raises
    ------
    InputError
        Malformed, hostile (DTD/entities/external references) or non-QuakeML XML, or no events.
    ConfigError
        When ``options.class_map`` names an unknown class.
    """
    path = Path(path)
    name = path.name
    table = resolve_class_map(options.class_map)
    col = _Collector(name, table)
    handler = _parse(path, col.add)
    if not col.n_events:
        raise InputError(name, "no events: the QuakeML document has no <event> elements")
    cols, lines, rejects = col.cols, col.lines, col.rejects
    fallback_origin, fallback_mag, overridden, no_id = col.fallback_origin, col.fallback_mag, col.overridden, col.no_id
    agencies = col.agencies

    built = build_catalog(
        CatalogColumns(
            time=cols["time"],
            latitude=cols["lat"],
            longitude=cols["lon"],
            depth=cols["depth"],
            magnitude=cols["mag"],
            magnitude_type=cols["mtype"],
            label=cols["label"],
            event_id=cols["id"],
            line=np.asarray(lines, dtype="int64"),
            raw=cols["raw"],
            depth_scale=1.0,
        ),
        source=name,
        class_map=options.class_map,
        magnitude_type=options.magnitude_type,
    )
    rejects = sorted(rejects + built.rejects, key=lambda r: r[1])
    assumptions = ["QuakeML depth read as metres, positive down (QuakeML BED 1.2)"]
    if fallback_origin:
        assumptions.append(f"{fallback_origin} event(s) without a matching preferredOriginID: first origin used")
    if fallback_mag:
        assumptions.append(f"{fallback_mag} event(s) without a matching preferredMagnitudeID: first magnitude used")
    if overridden:
        assumptions.append(f"{overridden} event(s) classed from a local code in description/comment text")
    if no_id:
        assumptions.append(f"{no_id} event(s) without publicID: id made from file name and line")
    if col.man_made:
        from degas.io.catalog_rules import man_made_note

        assumptions.append(man_made_note(col.man_made))
    assumptions.extend(built.assumptions)
    if options.timezone:
        assumptions.append(f"timezone option {options.timezone!r} ignored: times in this format are UTC")

    notes = finish_notes(name, list(built.notes), assumptions, rejects)
    station = options.station or handler.catalog_agency or (agencies.pop() if len(agencies) == 1 else None)
    meta = SeriesMeta(kind="seismic_catalog", quantity="events", station=station)
    prov = make_provenance(path, READER, len(built.data), len(rejects), "m", assumptions, options)
    catalog = EventCatalog(built.data, meta, (prov,))
    return ReadResult(records=[catalog], rejects=rejects_frame(rejects), notes=notes)
