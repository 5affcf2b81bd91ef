"""Places on a map: resolve itinerary places against a gazetteer and write GeoJSON (RFC 7946).

Gazetteer: a CSV or TSV file (by extension) whose header names the columns
``name``, ``latitude``, ``longitude`` and, optionally, ``alternatives``
(other spellings separated by ``;``); other columns are ignored. Latitude and
longitude are decimal degrees (WGS 84), latitude in [-90, 90], longitude in
[-180, 180]. Every bad row is reported as ``file:line: problem``.

Resolution: a place span (source, path or destination text) and every name and
alternative are reduced to a key (case-folded, curly apostrophes straightened,
whitespace collapsed, a leading ``the`` removed) and matched exactly; there is
no fuzzy matching. A key that would name two different places is an error.

Output: a FeatureCollection holding one Point per resolved place (properties
``name``, ``mentions``, ``roles``, ``first_record``), sorted by name, then one
LineString per route, sorted by doc and mover: per doc, or per doc and mover
entry when the itinerary was filtered by several movers. A route passes
through the resolved places of its events in order (each event: sources, then
paths, then destinations), consecutive repeats dropped; a route with fewer
than two positions is not drawn and is named in ``notes``. Positions are
``[longitude, latitude]`` (RFC 7946 section 3.1.1), WGS 84 is implied and no
``crs`` member is written (section 4). Names that did not resolve are listed,
sorted, in the top-level foreign member ``"unresolved"`` (section 6.1) and in
:attr:`MapResult.unresolved`.
"""

from __future__ import annotations

import csv
import json
import math
import re
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

from trainer.annotation.itinerary import PLACE_ROLES, Itinerary, ItineraryRow, fold
from trainer.corpus.convert.table import table_separator
from trainer.corpus.jsonl import not_utf8
from trainer.errors import GazetteerError, opening
from trainer.outputs import write_text

REQUIRED_COLUMNS = ("name", "latitude", "longitude")
ALTERNATIVES = "alternatives"
ALTERNATIVE_SEPARATOR = ";"
LIMITS = {"latitude": 90.0, "longitude": 180.0}
DECIMALS = 6  # about 10 cm; RFC 7946 section 11.2 advises against more
MAX_LISTED = 20
_DETERMINER = re.compile(r"^the\s+")


def place_key(text: str) -> str:
    """The match key of a place name or span: :func:`fold`, then a leading ``the`` removed."""
    key = fold(text)
    stripped = _DETERMINER.sub("", key)
    return stripped or key


@dataclass(frozen=True)
class Place:
    """One gazetteer entry; ``line`` is its line in the file."""

    name: str
    latitude: float
    longitude: float
    alternatives: tuple[str, ...] = ()
    line: int = 0

    @property
    def position(self) -> list[float]:
        """The GeoJSON position: longitude first (RFC 7946 section 3.1.1)."""
        return [round(self.longitude, DECIMALS), round(self.latitude, DECIMALS)]


@dataclass(frozen=True)
class Gazetteer:
    """Places and the key -> place index used by :meth:`resolve`."""

    places: tuple[Place, ...]
    index: dict[str, Place] = field(repr=False)
    source: str = ""
    ignored_columns: tuple[str, ...] = ()

    @classmethod
    def from_places(cls, places: list[Place] | tuple[Place, ...], *, source: str = "") -> "Gazetteer":
        """Index places by name and alternatives; a key naming two places is a :class:`GazetteerError`."""
        index: dict[str, Place] = {}
        errors: list[str] = []
        for place in places:
            for spelling in (place.name, *place.alternatives):
                key = place_key(spelling)
                other = index.get(key)
                if other is not None and other is not place:
                    errors.append(f"{source}:{place.line}: {spelling!r} also names {other.name!r} "
                                  f"(line {other.line}); a spelling may name one place only")
                    continue
                index[key] = place
        _raise_if(errors, source, "give each spelling to one place (drop it from one row or make it more specific)")
        return cls(places=tuple(places), index=index, source=source)

    def resolve(self, text: str) -> Place | None:
        """The place a span text names, or None."""
        return self.index.get(place_key(text))


def _raise_if(errors: list[str], source: str, fix: str) -> None:
    if errors:
        shown = "\n".join(errors[:MAX_LISTED])
        more = f"\n... and {len(errors) - MAX_LISTED} more" if len(errors) > MAX_LISTED else ""
        raise GazetteerError(f"{source}: {len(errors)} error(s) in the gazetteer:\n{shown}{more}", fix)


def _coordinate(cells: dict[str, str], column: str, where: str, errors: list[str]) -> float | None:
    raw = cells.get(column, "").strip()
    if not raw:
        errors.append(f"{where}: no {column}")
        return None
    try:
        value = float(raw)
    except ValueError:
        errors.append(f"{where}: {column} {raw!r} is not a number (write decimal degrees such as -41.2)")
        return None
    limit = LIMITS[column]
    if not math.isfinite(value) or not -limit <= value <= limit:
        errors.append(f"{where}: {column} {raw} is outside [-{limit:g}, {limit:g}]")
        return None
    return value


def read_gazetteer(path: Path | str) -> Gazetteer:
    """Read a gazetteer table (CSV or TSV by extension, UTF-8, header row first).

    Every problem is collected and raised in one :class:`GazetteerError` whose
    lines read ``file:line: problem`` (the header is line 1).
    """
    path = Path(path)
    separator = table_separator(path)
    with opening(path, expected="a .tsv or .csv file", missing_fix="check the gazetteer path"):
        handle = open(path, encoding="utf-8-sig", newline="")
    places: list[Place] = []
    errors: list[str] = []
    with handle:
        try:
            reader = csv.reader(handle, delimiter=separator)
            header = next((row for row in reader if any(cell.strip() for cell in row)), None)
            if header is None:
                raise GazetteerError(f"{path}: empty file", f"write a header row: {', '.join(REQUIRED_COLUMNS)}, "
                                                            f"{ALTERNATIVES}")
            columns = [cell.strip().lower() for cell in header]
            missing = [c for c in REQUIRED_COLUMNS if c not in columns]
            if missing:
                raise GazetteerError(f"{path}:{reader.line_num}: no column(s) {', '.join(missing)} in the header",
                                     f"the header must name {', '.join(REQUIRED_COLUMNS)} "
                                     f"(and optionally {ALTERNATIVES})")
            ignored = tuple(c for c in columns if c not in (*REQUIRED_COLUMNS, ALTERNATIVES))
            for row in reader:
                where = f"{path}:{reader.line_num}"
                if not any(cell.strip() for cell in row):
                    continue
                if len(row) > len(columns):
                    errors.append(f"{where}: {len(row)} cells but the header has {len(columns)}")
                    continue
                cells = dict(zip(columns, row))
                name = cells.get("name", "").strip()
                if not name:
                    errors.append(f"{where}: no name")
                latitude = _coordinate(cells, "latitude", where, errors)
                longitude = _coordinate(cells, "longitude", where, errors)
                if not name or latitude is None or longitude is None:
                    continue
                alternatives = tuple(a.strip() for a in cells.get(ALTERNATIVES, "").split(ALTERNATIVE_SEPARATOR)
                                     if a.strip())
                places.append(Place(name, latitude, longitude, alternatives, reader.line_num))
        except UnicodeDecodeError:
            raise not_utf8(path, "re-save the gazetteer as UTF-8") from None
        except csv.Error as exc:
            raise GazetteerError(f"{path}:{reader.line_num}: not a readable table ({exc})",
                                 "check the quoting") from None
    _raise_if(errors, str(path), "correct those rows (latitude and longitude in decimal degrees, WGS 84)")
    return replace(Gazetteer.from_places(places, source=str(path)), ignored_columns=ignored)


# ---------------------------------------------------------------- GeoJSON


@dataclass(frozen=True)
class MapResult:
    """The FeatureCollection plus what could not be shown.

    ``unresolved``: place texts that named no gazetteer entry, one spelling per
    key (the first met), sorted by key. ``notes``: routes not drawn and why.
    """

    collection: dict[str, Any]
    unresolved: list[str]
    notes: list[str]
    resolved_mentions: int
    unresolved_mentions: int


@dataclass
class _PlaceUse:
    place: Place
    mentions: int = 0
    roles: set[str] = field(default_factory=set)
    first_record: str = ""


def _route_groups(itinerary: Itinerary) -> dict[tuple[str, str | None], list[ItineraryRow]]:
    """Rows per route: per doc, or per (doc, mover entry) when several mover entries filtered the itinerary."""
    groups: dict[tuple[str, str | None], list[ItineraryRow]] = {}
    for row in itinerary.rows:
        if len(itinerary.movers) > 1:
            keys = [(row.doc, entry) for entry in row.matched]
        else:
            keys = [(row.doc, itinerary.movers[0] if itinerary.movers else None)]
        for key in keys:
            groups.setdefault(key, []).append(row)
    return groups


def _route(rows: list[ItineraryRow], gazetteer: Gazetteer) -> list[Place]:
    """Resolved places in event order (sources, paths, destinations), consecutive repeats dropped."""
    stops: list[Place] = []
    for row in rows:
        for role in PLACE_ROLES:
            for text in row.places(role):
                place = gazetteer.resolve(text)
                if place is not None and (not stops or stops[-1] is not place):
                    stops.append(place)
    return stops


def _feature(geometry: dict[str, Any], properties: dict[str, Any]) -> dict[str, Any]:
    return {"type": "Feature", "geometry": geometry, "properties": properties}


def build_geojson(itinerary: Itinerary, gazetteer: Gazetteer) -> MapResult:
    """Resolve the itinerary's places and build an RFC 7946 FeatureCollection (see the module docstring)."""
    uses: dict[str, _PlaceUse] = {}
    unresolved: dict[str, tuple[str, int]] = {}  # key -> (first spelling, mentions)
    for row in itinerary.rows:
        for role in PLACE_ROLES:
            for text in row.places(role):
                place = gazetteer.resolve(text)
                if place is None:
                    key = place_key(text)
                    spelling, count = unresolved.get(key, (text, 0))
                    unresolved[key] = (spelling, count + 1)
                    continue
                use = uses.setdefault(place.name, _PlaceUse(place, first_record=row.record_id))
                use.mentions += 1
                use.roles.add(role)
    features = [
        _feature({"type": "Point", "coordinates": use.place.position},
                 {"name": use.place.name, "mentions": use.mentions,
                  "roles": [r for r in PLACE_ROLES if r in use.roles], "first_record": use.first_record})
        for use in sorted(uses.values(), key=lambda u: (u.place.name.casefold(), u.place.name))
    ]
    notes: list[str] = []
    for (doc, mover), rows in sorted(_route_groups(itinerary).items(),
                                     key=lambda item: (item[0][0], fold(item[0][1] or ""))):
        stops = _route(rows, gazetteer)
        label = doc if mover is None else f"{doc} (mover {mover})"
        if len(stops) < 2:
            which = f" ({stops[0].name})" if stops else ""
            notes.append(f"{label}: {len(stops)} resolved place(s){which}; a route needs 2, none drawn")
            continue
        features.append(_feature(
            {"type": "LineString", "coordinates": [p.position for p in stops]},
            {"doc": doc, "mover": mover, "places": [p.name for p in stops], "events": len(rows)},
        ))
    names = [unresolved[key][0] for key in sorted(unresolved)]
    collection = {"type": "FeatureCollection", "features": features, "unresolved": names}
    return MapResult(collection=collection, unresolved=names, notes=notes,
                     resolved_mentions=sum(u.mentions for u in uses.values()),
                     unresolved_mentions=sum(count for _, count in unresolved.values()))


def write_geojson(result: MapResult, path: Path | str) -> Path:
    """Write the FeatureCollection as UTF-8 JSON (RFC 7946 section 11 / RFC 8259), two-space indent."""
    text = json.dumps(result.collection, indent=2, ensure_ascii=False, allow_nan=False)
    return write_text(path, text + "\n")
