"""Feature augmentation for domain adaptation (Daumé III 2007, "Frustratingly easy domain adaptation")."""

from __future__ import annotations

from tests.hand_parsed import REACHED_TARN, make_doc

from trainer.config import FeatureConfig
from trainer.corpus.auxiliary import TARGET_DOMAIN
from trainer.features.extract import DOMAIN_KEY, Featurizer, augment
from trainer.features.lexicons import load_lexicons


def test_each_feature_is_kept_shared_and_copied_for_its_domain() -> None:
    # The paper's mapping for a source-domain example: <x, x, 0>; for a target one: <x, 0, x>.
    # With named features that is: every feature once as is (shared) and once under the domain's prefix.
    assert augment({"lower": "we", "bias": 1.0}, "demo") == {
        "lower": "we", "bias": 1.0, "demo~lower": "we", "demo~bias": 1.0, DOMAIN_KEY: "demo",
    }


def test_target_and_auxiliary_sentences_share_only_the_unprefixed_features() -> None:
    doc = make_doc(REACHED_TARN)
    featurizer = Featurizer(FeatureConfig(groups=["lexical"]), load_lexicons())
    plain = featurizer.token_features(doc)
    target = [augment(features, TARGET_DOMAIN) for features in featurizer.token_features(doc)]
    aux = [augment(features, "demo") for features in featurizer.token_features(doc)]
    shared = set(plain[1])
    assert set(target[1]) & set(aux[1]) == shared | {DOMAIN_KEY}  # the domain name itself is a feature too
    assert (target[1][DOMAIN_KEY], aux[1][DOMAIN_KEY]) == ("target", "demo")
    assert set(target[1]) - shared == {f"target~{k}" for k in plain[1]} | {DOMAIN_KEY}
    assert target[1]["target~lemma"] == "reach" and aux[1]["demo~lemma"] == "reach"


def test_trigger_relative_features_follow_the_domain_of_the_token_features() -> None:
    doc = make_doc(REACHED_TARN)
    featurizer = Featurizer(FeatureConfig(groups=["lexical", "trigger_relative"]), load_lexicons())
    roles = featurizer.role_features(doc, (1, 2), [augment(f, "demo") for f in featurizer.token_features(doc)])
    assert roles[3]["t_side"] == "after" and roles[3]["demo~t_side"] == "after"
    assert roles[3][DOMAIN_KEY] == "demo"
    assert "demo~" + DOMAIN_KEY not in roles[3]
    unaugmented = featurizer.role_features(doc, (1, 2))
    assert not any("~" in key for key in unaugmented[3])
