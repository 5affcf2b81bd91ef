"""CoNLL-U input: hand-written sentences -> Docs, text checks against records, parse_records mixing both."""

from __future__ import annotations

from pathlib import Path
from typing import Sequence

import pytest
import spacy
from spacy.language import Language
from spacy.tokens import Doc

import trainer.parsing.cache as cache_module
from trainer.config import ParserConfig, config_from_dict
from trainer.corpus.records import Record
from trainer.errors import CorpusError, UnreadableInputError
from trainer.models.candidates import candidate_phrases
from trainer.parsing.align import AlignmentReport, span_to_tokens
from trainer.parsing.cache import ParseStats
from trainer.parsing.conllu_input import docs_for_records, first_difference, read_conllu
from trainer.parsing.parse import parse_records
from trainer.parsing.pipeline import parse_texts

# A multiword token (2-3 didn't), an empty node (4.1), SpaceAfter=No; then a sentence
# without '# text' and without a tree (HEAD and DEPREL are '_').
CONLLU = """\
# newdoc id = demo
# sent_id = demo-s001
# text = We didn't ride to Quillon.
1\tWe\twe\tPRON\tPRP\tCase=Nom|Number=Plur|Person=1|PronType=Prs\t4\tnsubj\t_\t_
2-3\tdidn't\t_\t_\t_\t_\t_\t_\t_\t_
2\tdid\tdo\tAUX\tVBD\tMood=Ind|Tense=Past|VerbForm=Fin\t4\taux\t_\t_
3\tn't\tnot\tPART\tRB\tPolarity=Neg\t4\tadvmod\t_\t_
4\tride\tride\tVERB\tVB\tVerbForm=Inf\t0\troot\t_\t_
4.1\trode\tride\tVERB\tVBD\t_\t_\t_\t1:nsubj\t_
5\tto\tto\tADP\tIN\t_\t6\tcase\t_\t_
6\tQuillon\tQuillon\tPROPN\tNNP\tNumber=Sing\t4\tobl\t_\tSpaceAfter=No
7\t.\t.\tPUNCT\t.\t_\t4\tpunct\t_\t_

# sent_id = demo-s002
1\tColm\tColm\tPROPN\tNNP\t_\t_\t_\t_\t_
2\tleft\tleave\tVERB\tVBD\t_\t_\t_\t_\t_
3\tCaddow\tCaddow\tPROPN\tNNP\t_\t_\t_\t_\tSpaceAfter=No
4\t.\t.\tPUNCT\t.\t_\t_\t_\t_\t_

"""
TEXT_1 = "We didn't ride to Quillon."
TEXT_2 = "Colm left Caddow."


@pytest.fixture(scope="module")
def blank() -> Language:
    return spacy.blank("en")


@pytest.fixture()
def conllu_file(tmp_path: Path) -> Path:
    path = tmp_path / "parsed.conllu"
    path.write_text(CONLLU, encoding="utf-8")
    return path


def write(tmp_path: Path, text: str) -> Path:
    path = tmp_path / "other.conllu"
    path.write_text(text, encoding="utf-8")
    return path


def record(record_id: str, text: str) -> Record:
    return Record(id=record_id, doc="demo", text=text, events=())


def test_sentence_becomes_a_doc_with_words_spaces_tags_and_tree(conllu_file: Path, blank: Language) -> None:
    sentences = read_conllu(conllu_file, blank.vocab)
    assert list(sentences) == ["demo-s001", "demo-s002"]
    first = sentences["demo-s001"]
    assert first.text == TEXT_1
    doc = first.doc
    assert doc.text == TEXT_1
    assert doc.vocab is blank.vocab
    assert [t.text for t in doc] == ["We", "did", "n't", "ride", "to", "Quillon", "."]
    assert [t.whitespace_ for t in doc] == [" ", "", " ", " ", " ", "", ""]
    assert [t.lemma_ for t in doc] == ["we", "do", "not", "ride", "to", "Quillon", "."]
    assert [t.pos_ for t in doc] == ["PRON", "AUX", "PART", "VERB", "ADP", "PROPN", "PUNCT"]
    assert [t.tag_ for t in doc] == ["PRP", "VBD", "RB", "VB", "IN", "NNP", "."]
    assert [t.head.i for t in doc] == [3, 3, 3, 3, 5, 3, 3]
    assert [t.dep_ for t in doc] == ["nsubj", "aux", "advmod", "root", "case", "obl", "punct"]
    assert str(doc[0].morph) == "Case=Nom|Number=Plur|Person=1|PronType=Prs"
    assert [s.text for s in doc.sents] == [TEXT_1]
    assert doc.ents == ()


def test_sentence_without_tree_and_text_comment(conllu_file: Path, blank: Language) -> None:
    second = read_conllu(conllu_file, blank.vocab)["demo-s002"]
    assert second.text is None
    assert second.doc.text == TEXT_2
    assert [t.text for t in second.doc] == ["Colm", "left", "Caddow", "."]
    assert [t.lemma_ for t in second.doc] == ["Colm", "leave", "Caddow", "."]
    assert not second.doc.has_annotation("DEP")
    assert [t.head.i for t in second.doc] == [0, 1, 2, 3]
    # Candidate phrases need noun chunks, which need a tree: they fall back to the other kinds.
    assert candidate_phrases(second.doc) == [(0, 1, "proper"), (2, 3, "proper")]


def test_docs_for_records_takes_listed_ids_only(conllu_file: Path, blank: Language) -> None:
    records = [record("demo-s002", TEXT_2), record("demo-s009", "We rode on."), record("demo-s001", TEXT_1)]
    docs = docs_for_records(conllu_file, records, blank.vocab)
    assert sorted(docs) == ["demo-s001", "demo-s002"]
    assert docs["demo-s001"].text == TEXT_1


def test_gold_spans_align_to_the_conllu_tokens(conllu_file: Path, blank: Language) -> None:
    doc = docs_for_records(conllu_file, [record("demo-s001", TEXT_1)], blank.vocab)["demo-s001"]
    report = AlignmentReport()
    assert span_to_tokens(doc, (3, 9), report) == (1, 3)  # "didn't" = did + n't
    assert span_to_tokens(doc, (18, 25), report) == (5, 6)  # "Quillon"
    assert span_to_tokens(doc, (3, 8), report) == (1, 3)  # "didn'" is widened
    assert (report.spans, report.widened, report.dropped) == (3, 1, 0)


def test_record_text_differing_from_the_text_comment_is_an_error(conllu_file: Path, blank: Language) -> None:
    with pytest.raises(CorpusError) as caught:
        docs_for_records(conllu_file, [record("demo-s001", "We didn't ride to Quillon!")], blank.vocab)
    assert caught.value.cause == (
        f"{conllu_file}: sentence 'demo-s001': '# text' differs from record 'demo-s001' at character 25: "
        "record 'demo-s001' has '!', the CoNLL-U has '.'"
    )


def test_record_text_differing_from_the_rebuilt_text_is_an_error(conllu_file: Path, blank: Language) -> None:
    with pytest.raises(CorpusError) as caught:
        docs_for_records(conllu_file, [record("demo-s002", "Colm left Caddow .")], blank.vocab)
    assert caught.value.cause == (
        f"{conllu_file}: sentence 'demo-s002': the text rebuilt from the words differs from record 'demo-s002' "
        "at character 16: record 'demo-s002' has ' .', the CoNLL-U has '.'"
    )


def test_text_comment_the_words_do_not_spell_is_an_error(tmp_path: Path, blank: Language) -> None:
    path = write(tmp_path, "# sent_id = s1\n# text = We rode.\n1\tWe\twe\tPRON\tPRP\t_\t2\tnsubj\t_\t_\n"
                           "2\trode\tride\tVERB\tVBD\t_\t0\troot\t_\t_\n3\t.\t.\tPUNCT\t.\t_\t2\tpunct\t_\t_\n\n")
    with pytest.raises(CorpusError) as caught:
        read_conllu(path, blank.vocab)
    assert caught.value.cause == (
        f"{path}: sentence 's1': the text rebuilt from the words differs from '# text' at character 7: "
        "'# text' has '.', the CoNLL-U has ' .'"
    )


def test_multiword_forms_that_do_not_spell_the_surface_token_fail_the_text_check(tmp_path: Path, blank: Language) -> None:
    path = write(tmp_path, "# sent_id = s1\n# text = del\n1-2\tdel\t_\t_\t_\t_\t_\t_\t_\t_\n"
                           "1\tde\tde\tADP\t_\t_\t0\troot\t_\t_\n2\tel\tel\tDET\t_\t_\t1\tdet\t_\t_\n\n")
    expected = "differs from '# text' at character 2: '# text' has 'l', the CoNLL-U has 'el'"
    with pytest.raises(CorpusError, match=expected):
        read_conllu(path, blank.vocab)


@pytest.mark.parametrize(
    ("text", "error", "cause"),
    [
        ("1\tWe\twe\tPRON\tPRP\t_\t0\troot\t_\t_\n\n", CorpusError,
         "{path}: sentence 1 has no '# sent_id' comment"),
        ("# sent_id = s1\n1\tWe\twe\tPRON\tPRP\t_\t0\troot\t_\t_\n\n"
         "# sent_id = s1\n1\tUs\twe\tPRON\tPRP\t_\t0\troot\t_\t_\n\n", CorpusError,
         "{path}: sent_id 's1' occurs more than once"),
        ("# sent_id = s1\n1\tWe\twe\tPRONOUN\tPRP\t_\t0\troot\t_\t_\n\n", CorpusError,
         "{path}: sentence 's1': word 1 has UPOS 'PRONOUN', not a Universal Dependencies tag"),
        ("# sent_id = s1\n1\tWe\twe\tPRON\tPRP\t_\t5\tnsubj\t_\t_\n\n", CorpusError,
         "{path}: sentence 's1': word 1 has HEAD 5, which is not a word of the sentence"),
        ("# sent_id = s1\n1\tWe\twe\tPRON\tPRP\t_\t1\tnsubj\t_\t_\n\n", CorpusError,
         "{path}: sentence 's1': word 1 has itself as HEAD"),
        ("# sent_id = s1\n1\tWe\twe\tPRON\tPRP\t_\t2\tnsubj\t_\t_\n2\tgo\tgo\tVERB\tVB\t_\t3\tconj\t_\t_\n"
         "3\trun\trun\tVERB\tVB\t_\t2\tconj\t_\t_\n\n", CorpusError,
         "{path}: sentence 's1': the HEAD column makes a cycle: words 2 -> 3 -> 2"),
        ("# sent_id = s1\n1\tWe\twe\n\n", UnreadableInputError,
         "{path}: sentence 's1': the line of word 1 has 3 columns, not 10"),
        ("# sent_id = s1\n1\tWe\twe\tPRON\tPRP\t_\tx\tnsubj\t_\t_\n\n", UnreadableInputError,
         "{path}: not valid CoNLL-U (Failed parsing field 'head': 'x' is not a valid value for parse_int_value.)"),
    ],
    ids=["no-sent-id", "repeated-sent-id", "bad-upos", "bad-head", "self-head", "head-cycle", "few-columns", "bad-head-value"],
)
def test_malformed_files(tmp_path: Path, blank: Language, text: str, error: type, cause: str) -> None:
    path = write(tmp_path, text)
    with pytest.raises(error) as caught:
        read_conllu(path, blank.vocab)
    assert caught.value.cause == cause.format(path=path)


def test_missing_file(tmp_path: Path, blank: Language) -> None:
    with pytest.raises(UnreadableInputError) as caught:
        read_conllu(tmp_path / "none.conllu", blank.vocab)
    assert caught.value.cause == f"{tmp_path / 'none.conllu'}: no such CoNLL-U file"


def test_first_difference() -> None:
    assert first_difference("abc", "abc") is None
    assert first_difference("abc", "abd") == 2
    assert first_difference("ab", "abc") == 2
    assert first_difference("", "a") == 0


def test_config_key() -> None:
    assert ParserConfig().conllu == ""
    assert config_from_dict({"parser": {"conllu": "parsed.conllu"}}).parser.conllu == "parsed.conllu"


@pytest.fixture()
def parser_calls(monkeypatch: pytest.MonkeyPatch) -> list[list[str]]:
    calls: list[list[str]] = []

    def counting(blank: Language, texts: Sequence[str], **options: int) -> list[Doc]:
        calls.append(list(texts))
        return parse_texts(blank, texts, **options)

    monkeypatch.setattr(cache_module, "parse_texts", counting)
    return calls


@pytest.mark.parametrize("use_cache", [False, True])
def test_parse_records_takes_conllu_docs_and_parses_the_rest(
    conllu_file: Path, tmp_path: Path, blank: Language, parser_calls: list[list[str]], use_cache: bool
) -> None:
    records = [record("demo-s001", TEXT_1), record("demo-s009", "We rode on."), record("demo-s002", TEXT_2)]
    config = ParserConfig(conllu=str(conllu_file), cache_dir=str(tmp_path / "cache"), use_cache=use_cache)
    docs, stats = parse_records(blank, records, config)
    assert [d.text for d in docs] == [TEXT_1, "We rode on.", TEXT_2]
    assert [t.dep_ for t in docs[0]] == ["nsubj", "aux", "advmod", "root", "case", "obl", "punct"]
    assert [t.text for t in docs[1]] == ["We", "rode", "on", "."]
    assert parser_calls == [["We rode on."]]
    assert stats == ParseStats(cached=0, parsed=1, rebuilt_shards=[])

    _, stats = parse_records(blank, records, config)
    assert stats == (ParseStats(cached=1, parsed=0) if use_cache else ParseStats(cached=0, parsed=1))
    assert len(parser_calls) == (1 if use_cache else 2)


def test_parse_records_without_conllu_parses_everything(blank: Language, parser_calls: list[list[str]]) -> None:
    records = [record("demo-s001", TEXT_1), record("demo-s002", TEXT_2)]
    docs, stats = parse_records(blank, records, ParserConfig(use_cache=False))
    assert parser_calls == [[TEXT_1, TEXT_2]]
    assert [t.text for t in docs[0]] == ["We", "did", "n't", "ride", "to", "Quillon", "."]
    assert stats.parsed == 2


def test_parse_records_checks_texts(conllu_file: Path, blank: Language, parser_calls: list[list[str]]) -> None:
    with pytest.raises(CorpusError, match="sentence 'demo-s002'"):
        parse_records(blank, [record("demo-s002", "Colm left Caddow!")], ParserConfig(conllu=str(conllu_file)))
    assert parser_calls == []


def test_unknown_lemma_and_tags(tmp_path: Path, blank: Language) -> None:
    path = write(tmp_path, "# sent_id = s1\n1\tWe\t_\t_\t_\t_\t0\troot\t_\t_\n2\t_\t_\tSYM\t_\t_\t1\tdep\t_\t_\n\n")
    doc = read_conllu(path, blank.vocab)["s1"].doc
    assert [(t.text, t.lemma_, t.pos_, t.tag_) for t in doc] == [("We", "", "", ""), ("_", "_", "SYM", "")]
