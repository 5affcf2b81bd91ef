"""Model files: one file holding the fitted extractor and a metadata block, with a digest beside it.

Layout of ``model.itin``: a first line ``ITINERANT-MODEL <format>``, a second
line of JSON metadata (readable without unpickling), then the extractor as a
joblib pickle. ``model.itin.sha256`` holds the SHA-256 of the whole file.

Model files are pickles. Unpickling runs code, so load only files from a
source you trust. The digest is checked before anything is unpickled: it
catches truncated, corrupted or altered files and files that are not ours,
but anyone who can change the model can also change its digest, so it does
not replace trusting where the file came from.
"""

from __future__ import annotations

import hashlib
import io
import json
import platform
import warnings
from dataclasses import dataclass
from importlib import metadata as importlib_metadata
from pathlib import Path
from typing import Any

from trainer.errors import ModelFileError
from trainer.outputs import output_lock, write_bytes

MAGIC = b"ITINERANT-MODEL"
FORMAT_VERSION = 1
DIGEST_SUFFIX = ".sha256"
TRACKED_PACKAGES = ("itinerant", "spacy", "sklearn-crfsuite", "python-crfsuite", "scikit-learn", "numpy", "joblib")


def library_versions() -> dict[str, str]:
    """Versions of the packages a model's behaviour depends on, plus Python's."""
    versions = {"python": platform.python_version()}
    for name in TRACKED_PACKAGES:
        try:
            versions[name] = importlib_metadata.version(name)
        except importlib_metadata.PackageNotFoundError:
            versions[name] = "not installed"
    return versions


def digest_path(path: Path) -> Path:
    return path.with_name(path.name + DIGEST_SUFFIX)


def save_model(model: Any, path: Path | str, metadata: dict[str, Any]) -> dict[str, Any]:
    """Write a model file and its digest atomically; return the metadata as written."""
    path = Path(path)
    import joblib  # here, not at the top: reports read library_versions without loading joblib

    payload = io.BytesIO()
    joblib.dump(model, payload, compress=3)
    meta = {"format_version": FORMAT_VERSION, "versions": library_versions(), **metadata,
            "payload_bytes": payload.getbuffer().nbytes}
    data = MAGIC + b" %d\n" % FORMAT_VERSION + json.dumps(meta, sort_keys=True).encode("utf-8") + b"\n" + payload.getvalue()
    new = hashlib.sha256(data).hexdigest()
    with output_lock(path):
        # The digest file names both the file in place and the new one while the model is replaced, so a
        # kill between the two renames still leaves a model that matches its digest; then only the new one.
        before = [hashlib.sha256(path.read_bytes()).hexdigest()] if path.is_file() else []
        write_bytes(digest_path(path), "".join(f"{h}  {path.name}\n" for h in [new, *before]).encode("ascii"))
        write_bytes(path, data)
        write_bytes(digest_path(path), f"{new}  {path.name}\n".encode("ascii"))
    return meta


@dataclass
class LoadedModel:
    model: Any
    metadata: dict[str, Any]


def _verified_bytes(path: Path) -> bytes:
    if path.is_dir():
        raise ModelFileError(f"{path}: is a folder, not a model file", "name the .itin file written by `itinerant fit`")
    try:
        data = path.read_bytes()
    except FileNotFoundError:
        raise ModelFileError(f"{path}: no such model file", "train one with `itinerant fit`") from None
    except OSError as exc:
        raise ModelFileError(f"{path}: cannot read the model file ({exc.strerror})", "check its permissions") from None
    digest_file = digest_path(path)
    try:
        lines = [line.split() for line in digest_file.read_text(encoding="ascii").splitlines() if line.strip()]
    except FileNotFoundError:
        raise ModelFileError(f"{path}: no digest file {digest_file.name} beside it",
                             "model files are pickles: only load files written by `itinerant fit` with their digest") from None
    except (OSError, UnicodeDecodeError) as exc:
        reason = exc.strerror if isinstance(exc, OSError) else "not ASCII text"
        raise ModelFileError(f"{path}: the digest file {digest_file.name} cannot be read ({reason})",
                             "model files are pickles: only load files written by `itinerant fit` with their digest") from None
    malformed = next((n for n, fields in enumerate(lines, start=1)
                      if len(fields) != 2 or len(fields[0]) != 64 or fields[0].strip("0123456789abcdef")), None)
    if malformed is not None:
        raise ModelFileError(f"{path}: line {malformed} of the digest file {digest_file.name} is not "
                             "`<SHA-256 in hex>  <file name>`",
                             "model files are pickles: only load files written by `itinerant fit` with their digest")
    listed = {digest: named for digest, named in lines}
    if not listed:
        raise ModelFileError(f"{path}: the digest file {digest_file.name} is empty",
                             "model files are pickles: only load files written by `itinerant fit` with their digest")
    other = next((named for named in listed.values() if named.lstrip("*") != path.name), None)
    if other is not None:
        raise ModelFileError(f"{path}: the digest file {digest_file.name} is for another file ({other!r})",
                             f"keep each model file with its own digest file, as `itinerant fit` wrote them; after "
                             f"renaming a model you trust, give it its name back ({other.lstrip('*')}) or write its "
                             f"new name in place of the old one in {digest_file.name}")
    actual = hashlib.sha256(data).hexdigest()
    expected = next(iter(listed))
    if actual not in listed:
        raise ModelFileError(
            f"{path}: SHA-256 digest mismatch (file {actual[:12]}..., expected {expected[:12]}...): "
            "the file was changed, truncated or replaced after it was written",
            "retrain with `itinerant fit` or restore the original file; do not load it",
        )
    return data


def read_metadata(path: Path | str) -> tuple[dict[str, Any], bytes]:
    """The verified metadata block and the payload, without unpickling anything."""
    path = Path(path)
    data = _verified_bytes(path)
    header, _, rest = data.partition(b"\n")
    if not header.startswith(MAGIC):
        raise ModelFileError(f"{path}: not an itinerant model file", "name a file written by `itinerant fit`")
    meta_line, _, payload = rest.partition(b"\n")
    try:
        meta = json.loads(meta_line)
    except ValueError:
        raise ModelFileError(f"{path}: damaged metadata block", "retrain with `itinerant fit`") from None
    return meta, payload


def load_model(path: Path | str) -> LoadedModel:
    """Verify the digest and the header, warn on version differences, then unpickle."""
    meta, payload = read_metadata(path)
    if meta.get("format_version") != FORMAT_VERSION:
        raise ModelFileError(f"{path}: model file format {meta.get('format_version')} (this itinerant reads {FORMAT_VERSION})",
                             "retrain the model with this version of itinerant")
    now = library_versions()
    differing = {k: (v, now.get(k)) for k, v in meta.get("versions", {}).items() if now.get(k) != v}
    if differing:
        listed = ", ".join(f"{k} {old} -> {new}" for k, (old, new) in sorted(differing.items()))
        warnings.warn(f"{path}: written with other library versions ({listed}); predictions may differ", stacklevel=2)
    import joblib

    try:
        model = joblib.load(io.BytesIO(payload))
    except Exception as exc:  # a verified file whose payload is still not a pickle joblib can read
        raise ModelFileError(f"{path}: the model payload cannot be read ({type(exc).__name__}: {exc})",
                             "retrain with `itinerant fit`; the file is not a model this itinerant can load") from None
    return LoadedModel(model=model, metadata=meta)
