"""The docs name no machine of ours and every doc they link to is in the repository."""

from __future__ import annotations

import re

from tests.conftest import REPO

DOCS = [REPO / "README.md", REPO / "DEVELOPERS.md", *sorted((REPO / "docs").glob("*.md"))]


def test_no_doc_points_at_a_path_on_a_developer_machine():
    machine = re.compile(r"(?<![\w.])/(?:work|home|Users|root|tmp|mnt)/[\w.-]+")
    found = {doc.name: machine.findall(doc.read_text(encoding="utf-8")) for doc in DOCS}
    assert {name: paths for name, paths in found.items() if paths} == {}


def test_every_linked_doc_exists_and_the_spec_is_the_repositorys_own():
    for doc in DOCS:
        for target in re.findall(r"\]\(([^)#\s]+\.md)\)", doc.read_text(encoding="utf-8")):
            assert (doc.parent / target).is_file(), (doc.name, target)
    for name in ("annotation-guide.md", "formats.md", "metrics.md"):
        text = (REPO / "docs" / name).read_text(encoding="utf-8")
        assert "(annotation-spec.md)" in text and "motion-annotation-spec" not in text
