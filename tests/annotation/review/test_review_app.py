"""The review server: its routes and answers, what it refuses, and a kill in the middle of a session."""

from __future__ import annotations

import json
import re
import signal
import socket
import urllib.error
import urllib.request
from pathlib import Path

import pytest
from review_samples import start_server, suggestion
from starlette.testclient import TestClient

from trainer.annotation.review.app import STATIC, bind, review_app
from trainer.corpus.jsonl import write_jsonl
from trainer.corpus.reader import read_corpus
from trainer.corpus.records import Event, Record, RoleSpan
from trainer.corpus.validate import check_files
from trainer.errors import ConfigError

TEXT = "We left Caddow for the lake."
LEFT = Event((3, 7), (RoleSpan("mover", (0, 2)),))


@pytest.fixture
def batch(tmp_path: Path) -> Path:
    path = tmp_path / "batch.jsonl"
    write_jsonl([suggestion(Record("s1", "book", TEXT), (LEFT,), 1), Record("s2", "book", "We rested.")], path)
    return path


@pytest.fixture
def client(batch: Path) -> TestClient:
    return TestClient(review_app(batch), base_url="http://127.0.0.1")


def test_the_page_and_its_assets_are_served_from_the_package_and_fetch_nothing_from_elsewhere(client: TestClient) -> None:
    page = client.get("/")
    assert page.status_code == 200 and '<script src="/static/review.js"></script>' in page.text
    for name in ("review.html", "review.css", "review.js"):
        assert client.get(f"/static/{name}").status_code == 200
        assert not re.search(r"https?://|//[a-z0-9.-]+\.[a-z]{2,}/", (STATIC / name).read_text(encoding="utf-8"))


def test_a_change_is_answered_with_the_new_version_and_the_record(client: TestClient, batch: Path) -> None:
    version = client.get("/api/file").json()["version"]
    answer = client.post("/api/records/s2", json={"version": version, "events": [], "action": "accept"})
    assert answer.status_code == 200
    body = answer.json()
    assert (body["reviewed"], body["total"], body["record"]["provenance"], body["warnings"]) == (1, 2, "gold", [])
    assert body["version"] == client.get("/api/file").json()["version"] != version


def test_stale_and_invalid_changes_get_409_and_422_with_the_message(client: TestClient, batch: Path) -> None:
    version = client.get("/api/file").json()["version"]
    assert client.post("/api/records/s2", json={"version": version, "events": [], "action": "accept"}).status_code == 200
    stale = client.post("/api/records/s1", json={"version": version, "events": [], "action": "edit"})
    assert stale.status_code == 409
    assert stale.json()["error"].endswith("the change to 's1' was not saved")
    assert stale.json()["fix"] == "reload the page to see the file as it is now, then make the change again"
    version = client.get("/api/file").json()["version"]
    bad = client.post("/api/records/s1", json={"version": version, "events": [{"trigger": [30, 40]}], "action": "edit"})
    assert bad.status_code == 422 and "[30, 40] is out of range for a text of 28 characters" in bad.json()["error"]


def test_requests_from_other_sites_are_refused(client: TestClient, batch: Path) -> None:
    original = batch.read_bytes()
    version = client.get("/api/file").json()["version"]
    as_form = client.post("/api/records/s2", content=json.dumps({"version": version, "events": [], "action": "accept"}),
                          headers={"Content-Type": "text/plain"})
    assert (as_form.status_code, as_form.json()["error"]) == (400, "changes must be sent as application/json")
    foreign = TestClient(review_app(batch), base_url="http://evil.example")
    assert foreign.get("/api/file").status_code == 400
    assert client.post("/api/records/s2", content=b"[1", headers={"Content-Type": "application/json"}).status_code == 400
    assert batch.read_bytes() == original


def test_a_port_in_use_is_refused_with_a_way_out() -> None:
    taken = bind(0)
    try:
        with pytest.raises(ConfigError, match=r"cannot listen on 127.0.0.1:\d+") as caught:
            bind(taken.getsockname()[1])
        assert "--port 0" in caught.value.fix
        assert taken.getsockname()[0] == "127.0.0.1"
    finally:
        taken.close()
    with pytest.raises(ConfigError, match="--port 70000 is not a port number"):
        bind(70000)


def post(url: str, record_id: str, body: dict) -> dict:
    request = urllib.request.Request(f"{url}api/records/{record_id}", data=json.dumps(body).encode(),
                                     headers={"Content-Type": "application/json"}, method="POST")
    with urllib.request.urlopen(request, timeout=10) as answer:
        return json.loads(answer.read())


def test_killing_the_server_mid_session_loses_no_saved_change(batch: Path) -> None:
    process, url = start_server(batch)
    try:
        with urllib.request.urlopen(f"{url}api/file", timeout=10) as answer:
            version = json.loads(answer.read())["version"]
        version = post(url, "s1", {"version": version, "action": "edit",
                                   "events": [{"trigger": [3, 7], "roles": [{"role": "mover", "span": [0, 2]},
                                                                            {"role": "source", "span": [8, 14]}]}]})["version"]
        post(url, "s2", {"version": version, "events": [], "action": "accept"})
    finally:
        process.send_signal(signal.SIGKILL)
        process.wait()
    assert process.returncode == -signal.SIGKILL
    check = check_files([batch])
    assert (check.errors, check.bad_records) == ([], 0)
    s1, s2 = (r for _, _, r in check.records)
    assert s1.events == (Event((3, 7), (RoleSpan("mover", (0, 2)), RoleSpan("source", (8, 14)))),)
    assert (s1.meta["itinerant"]["provenance"], s2.events, s2.meta["itinerant"]["provenance"]) == ("corrected", (), "gold")
    assert sorted(p.name for p in batch.parent.iterdir()) == ["batch.jsonl"]  # no temporary or lock file left behind

    # A new server on the same file shows both changes.
    process, url = start_server(batch)
    try:
        with urllib.request.urlopen(f"{url}api/file", timeout=10) as answer:
            assert json.loads(answer.read())["reviewed"] == 2
        with pytest.raises(urllib.error.HTTPError) as refused:
            post(url, "s1", {"version": "0" * 16, "events": [], "action": "edit"})
        assert refused.value.code == 409
    finally:
        process.kill()
        process.wait()
    assert [r.id for r in read_corpus([batch]).records] == ["s1", "s2"]


def test_the_server_listens_on_the_loopback_address_only(batch: Path) -> None:
    process, url = start_server(batch)
    try:
        port = int(url.rsplit(":", 1)[1].strip("/"))
        other = _non_loopback_address()
        if other is None:
            pytest.skip("this machine has no address besides the loopback one to try")
        with pytest.raises(OSError):
            socket.create_connection((other, port), timeout=2).close()
    finally:
        process.kill()
        process.wait()


def _non_loopback_address() -> str | None:
    probe = socket.socket(socket.AF_INET, socket.SOCK_DGRAM)
    try:
        probe.connect(("192.0.2.1", 9))  # a documentation address (RFC 5737); nothing is sent
        address = probe.getsockname()[0]
    except OSError:
        return None
    finally:
        probe.close()
    return None if address.startswith("127.") else address
