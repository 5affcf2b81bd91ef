"""Itinerary runs: events read from records, ordered per doc into a table, optionally mapped as GeoJSON."""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Sequence

from trainer.annotation.geo import MapResult, build_geojson, read_gazetteer, write_geojson
from trainer.annotation.itinerary import Itinerary, build_itinerary, check_min_confidence, write_itinerary
from trainer.corpus.convert.table import table_separator
from trainer.corpus.reader import expand_paths, read_corpus, skipped_summary
from trainer.errors import ConfigError
from trainer.outputs import check_output


@dataclass
class ItineraryOutcome:
    """The itinerary written, the map when asked for, and the records left out as bad (``skip_bad``)."""

    itinerary: Itinerary
    mapped: MapResult | None
    skipped: int = 0
    skipped_note: str = ""  # one line per record left out, for the user


def itinerary_files(records: Sequence[Path | str], output: Path | str, *, movers: Sequence[str] | None = None,
                    carry_mover: bool = False, gazetteer: Path | str | None = None, geojson: Path | str | None = None,
                    skip_bad: bool = False, min_confidence: float | None = None) -> ItineraryOutcome:
    """Write the itinerary table of the records' events and, with a gazetteer, the route as GeoJSON.

    Settings and every output are checked before anything is read, and every input (the gazetteer too) is read
    before anything is written.
    """
    check_min_confidence(min_confidence)
    records, output = [Path(p) for p in records], Path(output)
    gazetteer, geojson = (Path(gazetteer) if gazetteer else None), (Path(geojson) if geojson else None)
    if bool(gazetteer) != bool(geojson):
        raise ConfigError("--gazetteer and --geojson go together", "give both to write a map, or neither")
    inputs = [*records, *expand_paths(records), *([gazetteer] if gazetteer else [])]
    check_output(output, inputs=inputs, what="itinerary table")
    table_separator(output)
    if geojson:
        check_output(geojson, inputs=[*inputs, output], what="GeoJSON file")
    places = read_gazetteer(gazetteer) if gazetteer else None
    corpus = read_corpus(records, skip_bad=skip_bad)
    route = build_itinerary(corpus.records, movers=list(movers) if movers else None, carry_mover=carry_mover,
                            min_confidence=min_confidence)
    mapped = build_geojson(route, places) if places is not None else None
    write_itinerary(route, output)
    if mapped is not None:
        write_geojson(mapped, geojson)
    return ItineraryOutcome(route, mapped, len(corpus.skipped), skipped_summary(corpus) if corpus.skipped else "")
