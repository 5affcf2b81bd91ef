"""ISO-Space XML import: sentence records, the MOVELINK mapping, and counted losses.

Element and attribute names from ISO 24617-7:2014 (ISO-Space) as used in the
SpaceEval 2015 task annotation files; recalled from memory, not copied from a
file of that task. The samples are written here by hand.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from trainer.corpus.convert import FORMATS, read_isospace
from trainer.corpus.convert.inline import parse_inline
from trainer.corpus.convert.isospace import split_sentences
from trainer.corpus.records import Record
from trainer.errors import CorpusError, UnreadableInputError

# Offsets:  We 0-2, left 3-7, Caddow 8-14, walked 27-33, Arlo 42-46, Brenn 48-53, to 54-56,
# the lake 57-65 | The boat 67-75, drifted 76-83 | the ferry 95-104, brought 105-112, us 113-115, Ærø 119-122
BLOG = """<?xml version="1.0" encoding="UTF-8" ?>
<SpaceEvalTaskv1.2>
<TEXT><![CDATA[We left Caddow at dawn and walked through Arlo, Brenn to the lake. The boat drifted!

Next day the ferry brought us to Ærø]]></TEXT>
<TAGS>
<SPATIAL_ENTITY id="se0" start="0" end="2" text="We" comment="" />
<MOTION id="m0" start="3" end="7" text="left" motion_type="PATH" motion_class="" comment="" />
<PLACE id="pl0" start="8" end="14" text="Caddow" form="NAM" dimensionality="" />
<MOTION id="m1" start="27" end="33" text="walked" motion_type="MANNER" />
<PLACE id="pl1" start="42" end="46" text="Arlo" />
<PLACE id="pl2" start="48" end="53" text="Brenn" />
<SPATIAL_SIGNAL id="s0" start="54" end="56" text="to" />
<PLACE id="pl3" start="57" end="65" text="the lake" />
<SPATIAL_ENTITY id="se1" start="67" end="75" text="The boat" />
<MOTION id="m2" start="76" end="83" text="drifted" motion_type="MANNER" />
<SPATIAL_ENTITY id="se2" start="95" end="104" text="the ferry" />
<MOTION id="m3" start="105" end="112" text="brought" />
<SPATIAL_ENTITY id="se3" start="113" end="115" text="us" />
<PLACE id="pl4" start="119" end="122" text="Ærø" form="NAM" />
<MOVELINK id="mvl0" fromID="" fromText="" toID="" toText="" trigger="m0" source="pl0" goal="" midPoint="" mover="se0" landmark="" goal_reached="" pathID="" motion_signalID="" comment="" />
<MOVELINK id="mvl1" trigger="m1" triggerText="walked" source="" goal="pl3" midPoint="pl1, pl2" mover="se0" landmark="" goal_reached="TRUE" pathID="" motion_signalID="s0" />
<MOVELINK id="mvl2" trigger="m3" source="" goal="pl4" midPoint="" mover="se3" landmark="" goal_reached="" pathID="" motion_signalID="" />
<QSLINK id="qsl0" fromID="" toID="" trajector="se1" landmark="pl3" trigger="" relType="IN" />
</TAGS>
</SpaceEvalTaskv1.2>
"""


def expected_blog() -> list[Record]:
    lines = [
        "[We|mover1,mover2] [left|T1] [Caddow|source1] at dawn and [walked|T2] through [Arlo|path2], "
        "[Brenn|path2] to [the lake|destination2].",
        "The boat [drifted|T1]!",
        "Next day the ferry [brought|T1] [us|mover1] to [Ærø|destination1]",
    ]
    return [parse_inline(line, record_id=f"blog-s{i:03d}", doc="blog") for i, line in enumerate(lines, start=1)]


def assert_same(got: list[Record], want: list[Record]) -> None:
    assert len(got) == len(want)
    for mine, theirs in zip(got, want):
        assert mine.same_content(theirs), (mine, theirs)


def write(tmp_path: Path, name: str, content: str) -> Path:
    path = tmp_path / name
    path.write_text(content, encoding="utf-8")
    return path


def test_import_gives_sentence_records_with_mapped_roles(tmp_path: Path) -> None:
    path = write(tmp_path, "blog.xml", BLOG)
    conversion = read_isospace(path)
    assert_same(conversion.records, expected_blog())
    assert conversion.losses == [
        f"{path}: attribute PLACE.form is not mapped; its value was not imported (2x; e.g. pl0='NAM'; pl4='NAM')",
        f"{path}: attribute MOTION.motion_type is not mapped; its value was not imported "
        "(3x; e.g. m0='PATH'; m1='MANNER'; m2='MANNER')",
        f"{path}: attribute MOVELINK.goal_reached is not mapped; its value was not imported (1x; e.g. mvl1='TRUE')",
        f"{path}: attribute MOVELINK.motion_signalID is not mapped; its value was not imported (1x; e.g. mvl1='s0')",
        f"{path}: QSLINK links are not mapped; not imported (1x; e.g. qsl0)",
        f"{path}: SPATIAL_SIGNAL tags that no imported event uses; not imported (1x; e.g. s0 'to')",
        f"{path}: SPATIAL_ENTITY tags that no imported event uses; not imported (2x; e.g. se1 'The boat'; se2 'the ferry')",
    ]


def test_the_reader_is_registered(tmp_path: Path) -> None:
    path = write(tmp_path, "blog.xml", BLOG)
    assert_same(FORMATS["isospace"].reader(path).records, expected_blog())


def test_a_smaller_role_inventory_is_reported(tmp_path: Path) -> None:
    path = write(tmp_path, "blog.xml", BLOG)
    conversion = read_isospace(path, roles=("mover", "source", "destination"))
    assert conversion.records[0].events[1].spans_of("path") == []
    assert conversion.losses[2] == (
        f"{path}: role 'path' (from midPoint) is not in the inventory; left out (2x; e.g. mvl1 midPoint=pl1; mvl1 midPoint=pl2)"
    )


# Text: "We rowed out. Then we reached Tarn." (We 0-2, rowed 3-8, Then 14-18, we 19-21, reached 22-29, Tarn 30-34)
LOSSY = """<?xml version="1.0" encoding="UTF-8" ?>
<SpaceEvalTaskv1.2>
<TEXT><![CDATA[We rowed out. Then we reached Tarn.]]></TEXT>
<TAGS>
<SPATIAL_ENTITY id="se0" start="0" end="2" text="We" />
<MOTION id="m0" start="3" end="8" text="rowed" />
<SPATIAL_ENTITY id="se1" start="19" end="21" text="us" />
<MOTION id="m1" start="22" end="29" text="reached" />
<PLACE id="pl0" start="30" end="34" text="Tarn" />
<PLACE id="pl1" start="-1" end="-1" text="" />
<MOVELINK id="mvl0" trigger="m0" mover="se0" goal="pl0" source="pl1" midPoint="pl7 pl8,pl9" />
<MOVELINK id="mvl1" trigger="m1" mover="se1" goal="pl0" source="pl5" pathID="pl6" />
<MOVELINK id="mvl2" trigger="m9" mover="se1" />
<MOVELINK id="mvl3" trigger="" mover="se1" />
</TAGS>
</SpaceEvalTaskv1.2>
"""


def test_what_cannot_be_imported_is_counted(tmp_path: Path) -> None:
    path = write(tmp_path, "lossy.xml", LOSSY)
    conversion = read_isospace(path)
    assert_same(
        conversion.records,
        [
            parse_inline("[We|mover1] [rowed|T1] out.", record_id="lossy-s001", doc="lossy"),
            parse_inline("Then [we|mover1] [reached|T1] [Tarn|destination1].", record_id="lossy-s002", doc="lossy"),
        ],
    )
    assert conversion.losses == [
        f"{path}: MOVELINK source is a non-consuming tag; that role was left out (1x; e.g. mvl0 source=pl1)",
        f"{path}: MOVELINK midPoint names an unknown id; that role was left out "
        "(3x; e.g. mvl0 midPoint=pl7; mvl0 midPoint=pl8; mvl0 midPoint=pl9)",
        f"{path}: MOVELINK spans fall in different sentences; roles outside the trigger's sentence were left out "
        "(1x; e.g. mvl0 goal=pl0 'Tarn')",
        f"{path}: text attribute differs from the document text at the offsets; the offsets were kept "
        "(1x; e.g. se1 text='us' at offsets 'we')",
        f"{path}: MOVELINK source names an unknown id; that role was left out (1x; e.g. mvl1 source=pl5)",
        f"{path}: MOVELINK pathID names an unknown id; that role was left out (1x; e.g. mvl1 pathID=pl6)",
        f"{path}: MOVELINK trigger names an unknown id; the link was not imported (1x; e.g. mvl2 trigger='m9')",
        f"{path}: MOVELINK has no trigger; the link was not imported (1x; e.g. mvl3 trigger='')",
    ]


def test_losses_of_one_kind_are_one_line_with_five_examples(tmp_path: Path) -> None:
    places = "".join(f'<PLACE id="pl{i}" start="0" end="4" text="Tarn" />\n' for i in range(12))
    path = write(tmp_path, "many.xml", f"<doc><TEXT>Tarn.</TEXT><TAGS>{places}</TAGS></doc>")
    assert read_isospace(path).losses == [
        f"{path}: PLACE tags that no imported event uses; not imported "
        "(12x; e.g. pl0 'Tarn'; pl1 'Tarn'; pl2 'Tarn'; pl3 'Tarn'; pl4 'Tarn'; ...)"
    ]


def test_malformed_xml_names_the_file_line_and_column(tmp_path: Path) -> None:
    path = write(tmp_path, "broken.xml", "<doc>\n<TEXT>Salt & pepper</TEXT>\n</doc>\n")
    with pytest.raises(UnreadableInputError) as caught:
        read_isospace(path)
    assert str(caught.value).startswith(f"{path}: not well-formed XML at line 2, column 12 (")


def test_a_file_without_tags_is_refused(tmp_path: Path) -> None:
    path = write(tmp_path, "plain.xml", "<doc><TEXT>We left.</TEXT></doc>")
    with pytest.raises(CorpusError) as caught:
        read_isospace(path)
    assert str(caught.value) == (
        f"{path}: no <TAGS> under the root <doc>\n"
        "  fix: export the file from the annotation tool with its text and tags"
    )


def test_offsets_outside_the_text_are_refused(tmp_path: Path) -> None:
    path = write(tmp_path, "off.xml", '<doc><TEXT>We left.</TEXT><TAGS><MOTION id="m0" start="3" end="40" /></TAGS></doc>')
    with pytest.raises(CorpusError, match=r"MOTION 'm0' has offsets \[3, 40\) outside the 8-character text"):
        read_isospace(path)


def test_sentence_splitter() -> None:
    text = 'Mr. Pym stayed.  "Go on!" he said.\n\nDay two\nwe rowed on? Yes'
    assert [text[s:e] for s, e in split_sentences(text)] == [
        "Mr.",
        "Pym stayed.",
        '"Go on!"',
        "he said.",
        "Day two\nwe rowed on?",
        "Yes",
    ]


def test_an_unknown_encoding_in_the_declaration_is_a_located_error(tmp_path: Path) -> None:
    # found by tests/corpus/test_reader_properties.py: ElementTree raised LookupError for encoding="TF-8"
    path = write(tmp_path, "blog.xml", BLOG.replace('encoding="UTF-8"', 'encoding="TF-8"'))
    with pytest.raises(UnreadableInputError, match=r"blog.xml: the XML declaration names an unknown encoding"):
        read_isospace(path)
