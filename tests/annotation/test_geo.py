"""Gazetteer reading and validation, place resolution, and GeoJSON checked against RFC 7946."""

from __future__ import annotations

import json
import math
from pathlib import Path

import pytest

from trainer.annotation.geo import build_geojson, place_key, read_gazetteer, write_geojson
from trainer.annotation.itinerary import build_itinerary
from trainer.corpus.convert.inline import parse_inline
from trainer.corpus.reader import read_corpus
from trainer.errors import GazetteerError, TableFormatError, UnreadableInputError

DEMO = Path(__file__).resolve().parents[2] / "demo_annotations"

GAZETTEER = """name\tlatitude\tlongitude\talternatives\tkind
Caddow\t-41.2\t-18.4\tPort Caddow\tport town
Kell Ferry\t-41.02\t-17.85\tKells Ferry\tferry

the Sallow Gap\t-40.9\t-17.0\tSallow Pass; the Gap \tpass
Orrin's Ford\t-40.90\t-17.60\tOrrins Ford\tford
Quillon\t-41.10\t-17.50\t\tmarket town
river Aun\t-41.0\t-17.8\tAun;the Aun;\triver
"""


def write(tmp_path: Path, text: str, name: str = "g.tsv") -> Path:
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


@pytest.fixture
def gazetteer(tmp_path):
    return read_gazetteer(write(tmp_path, GAZETTEER))


def rec(line: str, record_id: str):
    return parse_inline(line, record_id=record_id, doc=record_id.rsplit("-", 1)[0])


RECORDS = [
    rec("[We|mover1,mover2] [left|T1] [Caddow|source1] and [rode|T2] to [Kell Ferry|destination2].", "log-s001"),
    rec("[We|mover1,mover2] [forded|T1] [the Aun|path1] by [Orrins Ford|path1] and [came|T2] "
        "to [Quillon|destination2] by [the old drove|path2].", "log-s002"),
    rec("[Dicken|mover1] [rode|T1] from [Quillon|source1] over [the Scour|path1] to [Kell Ferry|destination1].",
        "log-s003"),
    rec("[We|mover1] [left|T1] [quillon|source1] at dawn by [the Old  Drove|path1].", "log-s004"),
    rec("[I|mover1] [reached|T1] [Caddow|destination1].", "solo-s001"),
]

# ---------------------------------------------------------------- RFC 7946 structure

GEOMETRY_TYPES = {"Point", "MultiPoint", "LineString", "MultiLineString", "Polygon", "MultiPolygon",
                  "GeometryCollection"}  # RFC 7946 section 1.4: the closed set of geometry types


def assert_position(position) -> None:
    # RFC 7946 section 3.1.1: a position is [longitude, latitude] (optionally altitude), WGS 84 degrees
    assert isinstance(position, list) and len(position) in (2, 3)
    assert all(isinstance(x, (int, float)) and math.isfinite(x) for x in position)
    lon, lat = position[:2]
    assert -180 <= lon <= 180 and -90 <= lat <= 90


def assert_rfc7946(collection: dict) -> None:
    """The parts of RFC 7946 this project relies on."""
    # Section 3.3: a FeatureCollection has "type": "FeatureCollection" and a "features" array.
    assert collection["type"] == "FeatureCollection"
    assert isinstance(collection["features"], list)
    # Section 4: coordinates are WGS 84; the "crs" member of the 2008 spec is gone and must not be written.
    assert "crs" not in collection
    for feature in collection["features"]:
        # Section 3.2: a Feature has "type": "Feature", a "geometry" (object or null) and "properties" (object or null).
        assert feature["type"] == "Feature"
        assert {"type", "geometry", "properties"} <= feature.keys()
        assert "crs" not in feature
        geometry = feature["geometry"]
        assert geometry["type"] in GEOMETRY_TYPES
        assert isinstance(feature["properties"], dict)
        if geometry["type"] == "Point":
            # Section 3.1.2: a Point's coordinates are one position.
            assert_position(geometry["coordinates"])
        elif geometry["type"] == "LineString":
            # Section 3.1.4: a LineString's coordinates are an array of two or more positions.
            assert len(geometry["coordinates"]) >= 2
            for position in geometry["coordinates"]:
                assert_position(position)


# ---------------------------------------------------------------- gazetteer


def test_reads_names_alternatives_and_ignores_extra_columns(gazetteer) -> None:
    assert [p.name for p in gazetteer.places] == ["Caddow", "Kell Ferry", "the Sallow Gap", "Orrin's Ford",
                                                 "Quillon", "river Aun"]
    sallow = gazetteer.places[2]
    assert (sallow.latitude, sallow.longitude, sallow.alternatives, sallow.line) == (-40.9, -17.0,
                                                                                    ("Sallow Pass", "the Gap"), 5)
    assert gazetteer.places[5].alternatives == ("Aun", "the Aun")  # empty alternatives dropped
    assert gazetteer.ignored_columns == ("kind",)


def test_csv_with_quotes(tmp_path) -> None:
    text = 'name,latitude,longitude,alternatives\n"Orrin\'s Ford, upper",-40.9,-17.6,"Orrins Ford;Orrin’s Ford"\n'
    place = read_gazetteer(write(tmp_path, text, "g.csv")).resolve("orrin’s ford, upper")
    assert place is not None and place.alternatives == ("Orrins Ford", "Orrin’s Ford")


@pytest.mark.parametrize(("text", "name"), [
    ("Caddow", "Caddow"),
    ("CADDOW", "Caddow"),
    ("the Caddow", "Caddow"),  # a leading "the" is dropped on both sides
    ("Port  Caddow", "Caddow"),  # alternative; whitespace collapsed
    ("Sallow Gap", "the Sallow Gap"),  # the entry's own name has the determiner
    ("THE sallow\tgap", "the Sallow Gap"),
    ("the Gap", "the Sallow Gap"),
    ("Gap", "the Sallow Gap"),
    ("Orrin’s Ford", "Orrin's Ford"),  # curly apostrophe straightened
    ("Orrins Ford", "Orrin's Ford"),
    ("the Aun", "river Aun"),
    ("Aun", "river Aun"),
    ("Kells Ferry", "Kell Ferry"),
    ("Caddow Bay", None),  # exact match only
    ("Theydon", None),  # "the" is only a whole word
    ("a Caddow", None),  # only "the" is a determiner here
])  # fmt: skip
def test_resolution(gazetteer, text: str, name: str | None) -> None:
    place = gazetteer.resolve(text)
    assert (place.name if place else None) == name


def test_place_key() -> None:
    assert place_key("  The   Isle of  Tarn ") == "isle of tarn"
    assert place_key("the") == "the"
    assert place_key("Orrin‘s") == "orrin's"


def test_validation_errors_name_file_and_line(tmp_path) -> None:
    path = write(tmp_path, "name\tlatitude\tlongitude\n"
                           "Caddow\t-41.2\t-18.4\n"
                           "Bad\tnorth\t-18.4\n"
                           "High\t95\t0\n"
                           "West\t0\t-181\n"
                           "\n"
                           "\t1\t1\n"
                           "Nowhere\tnan\t\n"
                           "Wide\t1\t2\t3\n")
    with pytest.raises(GazetteerError) as caught:
        read_gazetteer(path)
    assert caught.value.cause == "\n".join([
        f"{path}: 7 error(s) in the gazetteer:",
        f"{path}:3: latitude 'north' is not a number (write decimal degrees such as -41.2)",
        f"{path}:4: latitude 95 is outside [-90, 90]",
        f"{path}:5: longitude -181 is outside [-180, 180]",
        f"{path}:7: no name",
        f"{path}:8: latitude nan is outside [-90, 90]",
        f"{path}:8: no longitude",
        f"{path}:9: 4 cells but the header has 3",
    ])
    assert caught.value.fix == "correct those rows (latitude and longitude in decimal degrees, WGS 84)"


def test_boundaries_are_allowed(tmp_path) -> None:
    path = write(tmp_path, "name\tlatitude\tlongitude\nPole\t90\t-180\nOther\t-90\t180\n")
    assert [(p.latitude, p.longitude) for p in read_gazetteer(path).places] == [(90.0, -180.0), (-90.0, 180.0)]


def test_missing_columns_and_clashing_spellings(tmp_path) -> None:
    path = write(tmp_path, "name\tlat\tlon\nCaddow\t-41.2\t-18.4\n")
    with pytest.raises(GazetteerError) as caught:
        read_gazetteer(path)
    assert caught.value.cause == f"{path}:1: no column(s) latitude, longitude in the header"
    path = write(tmp_path, "name\tlatitude\tlongitude\talternatives\n"
                           "Isle of Tarn\t-41.8\t-18.7\tTarn;the Isle of Tarn\n"
                           "Tarn Water\t-41.0\t-18.0\tthe Tarn\n")
    with pytest.raises(GazetteerError) as caught:
        read_gazetteer(path)
    assert caught.value.cause == (f"{path}: 1 error(s) in the gazetteer:\n"
                                  f"{path}:3: 'the Tarn' also names 'Isle of Tarn' (line 2); "
                                  "a spelling may name one place only")


def test_unreadable_and_unnamed_formats(tmp_path) -> None:
    with pytest.raises(UnreadableInputError):
        read_gazetteer(tmp_path / "missing.tsv")
    with pytest.raises(TableFormatError):
        read_gazetteer(write(tmp_path, GAZETTEER, "g.txt"))
    with pytest.raises(GazetteerError) as caught:
        read_gazetteer(write(tmp_path, "\n\n"))
    assert caught.value.cause == f"{tmp_path / 'g.tsv'}: empty file"


# ---------------------------------------------------------------- GeoJSON


def point(collection: dict, name: str) -> dict:
    return next(f for f in collection["features"] if f["properties"].get("name") == name)


def lines(collection: dict) -> list[dict]:
    return [f for f in collection["features"] if f["geometry"]["type"] == "LineString"]


def test_unfiltered_geojson_is_exact(gazetteer) -> None:
    result = build_geojson(build_itinerary(RECORDS), gazetteer)
    collection = result.collection
    assert_rfc7946(collection)
    assert list(collection) == ["type", "features", "unresolved"]  # "unresolved": a foreign member, section 6.1
    points = [f for f in collection["features"] if f["geometry"]["type"] == "Point"]
    assert [(f["properties"], f["geometry"]["coordinates"]) for f in points] == [
        ({"name": "Caddow", "mentions": 2, "roles": ["source", "destination"], "first_record": "log-s001"},
         [-18.4, -41.2]),
        ({"name": "Kell Ferry", "mentions": 2, "roles": ["destination"], "first_record": "log-s001"},
         [-17.85, -41.02]),
        ({"name": "Orrin's Ford", "mentions": 1, "roles": ["path"], "first_record": "log-s002"}, [-17.6, -40.9]),
        ({"name": "Quillon", "mentions": 3, "roles": ["source", "destination"], "first_record": "log-s002"},
         [-17.5, -41.1]),
        ({"name": "river Aun", "mentions": 1, "roles": ["path"], "first_record": "log-s002"}, [-17.8, -41.0]),
    ]
    # One route per doc, through sources, paths, destinations in event order; Quillon twice in a row counts once.
    assert [(f["properties"], f["geometry"]["coordinates"]) for f in lines(collection)] == [
        ({"doc": "log", "mover": None, "events": 6,
          "places": ["Caddow", "Kell Ferry", "river Aun", "Orrin's Ford", "Quillon", "Kell Ferry", "Quillon"]},
         [[-18.4, -41.2], [-17.85, -41.02], [-17.8, -41.0], [-17.6, -40.9], [-17.5, -41.1], [-17.85, -41.02],
          [-17.5, -41.1]]),
    ]
    # "solo" resolves one place only: no LineString (section 3.1.4 needs two positions), and the result says so.
    assert result.notes == ["solo: 1 resolved place(s) (Caddow); a route needs 2, none drawn"]
    # "the old drove" and "the Old  Drove" are one name (first spelling kept); sorted by key.
    assert result.unresolved == collection["unresolved"] == ["the old drove", "the Scour"]
    assert (result.resolved_mentions, result.unresolved_mentions) == (9, 3)


def test_point_coordinates_are_longitude_then_latitude(gazetteer) -> None:
    # Caddow: latitude -41.2, longitude -18.4; RFC 7946 section 3.1.1 puts longitude first.
    result = build_geojson(build_itinerary(RECORDS[:1]), gazetteer)
    assert point(result.collection, "Caddow")["geometry"]["coordinates"] == [-18.4, -41.2]


def test_routes_per_mover_when_several_movers_filter(gazetteer) -> None:
    result = build_geojson(build_itinerary(RECORDS, movers=["first_person", "Dicken"]), gazetteer)
    assert_rfc7946(result.collection)
    assert [(f["properties"]["doc"], f["properties"]["mover"], f["properties"]["places"])
            for f in lines(result.collection)] == [
        ("log", "Dicken", ["Quillon", "Kell Ferry"]),
        ("log", "first_person", ["Caddow", "Kell Ferry", "river Aun", "Orrin's Ford", "Quillon"]),
    ]
    assert result.notes == ["solo (mover first_person): 1 resolved place(s) (Caddow); a route needs 2, none drawn"]


def test_single_mover_filter_names_the_mover(gazetteer) -> None:
    result = build_geojson(build_itinerary(RECORDS, movers="Dicken"), gazetteer)
    assert [f["properties"] for f in lines(result.collection)] == [
        {"doc": "log", "mover": "Dicken", "places": ["Quillon", "Kell Ferry"], "events": 1}]
    assert [f["properties"]["name"] for f in result.collection["features"][:-1]] == ["Kell Ferry", "Quillon"]
    assert result.unresolved == ["the Scour"] and result.notes == []


def test_no_route_when_nothing_resolves(gazetteer) -> None:
    result = build_geojson(build_itinerary([rec("[We|mover1] [went|T1] to [Gorseys|destination1].", "x-s001")]),
                           gazetteer)
    assert result.collection == {"type": "FeatureCollection", "features": [], "unresolved": ["Gorseys"]}
    assert result.notes == ["x: 0 resolved place(s); a route needs 2, none drawn"]


def test_written_geojson_round_trips_and_is_deterministic(tmp_path, gazetteer) -> None:
    result = build_geojson(build_itinerary(RECORDS), gazetteer)
    path = write_geojson(result, tmp_path / "out" / "map.geojson")
    text = path.read_text(encoding="utf-8")
    assert text.endswith("}\n") and json.loads(text) == result.collection
    # The same places listed in another order in the gazetteer give the same file.
    header, *rows = GAZETTEER.splitlines()
    shuffled = read_gazetteer(write(tmp_path, "\n".join([header, *reversed(rows)]) + "\n", "r.tsv"))
    again = write_geojson(build_geojson(build_itinerary(RECORDS), shuffled), tmp_path / "again.geojson")
    assert again.read_text(encoding="utf-8") == text


# ---------------------------------------------------------------- the demo, end to end


def test_demo_gold_itinerary_and_map(tmp_path) -> None:
    records = read_corpus([DEMO / "test" / "ruddock-drove-1.jsonl"]).records
    gazetteer = read_gazetteer(DEMO / "gazetteer.tsv")
    itinerary = build_itinerary(records, movers=["first_person"])
    table = tmp_path / "ruddock.tsv"
    from trainer.annotation.itinerary import write_itinerary

    write_itinerary(itinerary, table)
    assert table.read_bytes().decode("utf-8").startswith("doc\tid\torder\tevent\tmover\ttrigger\t")
    assert set(itinerary.to_frame()["matched"]) == {"first_person"}

    result = build_geojson(itinerary, gazetteer)
    assert_rfc7946(result.collection)
    routes = lines(result.collection)
    assert len(routes) >= 1
    # The drover's own journey in the gold annotation: Dunmarrow, the ford, the river, the market.
    assert routes[0]["properties"]["places"] == ["Dunmarrow", "Orrin's Ford", "river Aun", "Quillon"]
    assert "Gorseys" in result.unresolved and result.unresolved == result.collection["unresolved"]
    json.loads(write_geojson(result, tmp_path / "ruddock.geojson").read_text(encoding="utf-8"))

    everyone = build_geojson(build_itinerary(records), gazetteer)
    assert_rfc7946(everyone.collection)
    assert len(lines(everyone.collection)) == 1 and len(everyone.unresolved) > len(result.unresolved)
