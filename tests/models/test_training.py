"""Training refuses data a model cannot learn from, before any parsing."""

from __future__ import annotations

import pytest

from trainer.config import config_from_dict
from trainer.corpus.records import Event, Record, RoleSpan
from trainer.errors import CorpusError
from trainer.models.training import fit_extractor, require_training_data

UNANNOTATED = Record(id="u", doc="d", text="We left Caddow.")
NEGATIVE = Record(id="n", doc="d", text="We sat at Caddow.", events=())
POSITIVE = Record(id="p", doc="d", text="We left Caddow.", events=(Event((3, 7), (RoleSpan("mover", (0, 2)),)),))
CRF = config_from_dict({})
RULES = config_from_dict({"trigger_model": {"kind": "rules"}, "role_model": {"kind": "rules"}})


@pytest.mark.parametrize("records, expected", [
    ([], "no annotated record to train on"),
    ([UNANNOTATED], r"no annotated record to train on \(none of the 1 record\(s\) has an \"events\" list\)"),
    ([NEGATIVE, UNANNOTATED], r"the 1 annotated record\(s\) hold no motion event, so a crf model has nothing to learn"),
])
def test_fit_refuses_a_corpus_without_annotation_or_events(records, expected):
    with pytest.raises(CorpusError, match=expected) as caught:
        fit_extractor(records, CRF)  # refused before the parser is even loaded
    assert caught.value.exit_code == 1


def test_the_rule_baseline_needs_annotated_records_but_no_events():
    require_training_data([NEGATIVE], RULES)
    require_training_data([POSITIVE], CRF)
    with pytest.raises(CorpusError, match="no annotated record"):
        require_training_data([UNANNOTATED], RULES)
