"""The review page: read and correct a batch (or any canonical JSONL file) in the browser, one sentence at a time.

- :mod:`trainer.annotation.review.session`: :class:`ReviewFile`, the file
  behind the page: what the page is shown, and how one change is checked
  (the rules of ``itinerant check``), refused when stale, stamped with its
  provenance and saved atomically;
- :mod:`trainer.annotation.review.app`: :func:`review_app` (the Starlette app)
  and :func:`serve` (uvicorn on 127.0.0.1);
- ``static/``: the page itself (HTML, CSS, JavaScript), shipped with the package.

See docs/retraining.md for the workflow and the keys.
"""

from trainer.annotation.review.session import ACTIONS, ReviewFile, SaveResult, file_version

__all__ = ["ACTIONS", "ReviewFile", "SaveResult", "file_version", "review_app", "serve"]


def __getattr__(name: str):
    if name in ("review_app", "serve"):
        from trainer.annotation.review import app

        return getattr(app, name)
    raise AttributeError(f"module 'trainer.annotation.review' has no attribute {name!r}")
