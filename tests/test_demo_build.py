"""The compiled demo corpus matches its hand-written inline-markup sources."""

from __future__ import annotations

import subprocess
import sys

from tests.conftest import DEMO


def test_compiled_demo_files_are_up_to_date():
    result = subprocess.run([sys.executable, str(DEMO / "build_demo.py"), "--check"], capture_output=True, text=True)
    assert result.returncode == 0, result.stdout + result.stderr
    assert "TOTAL" in result.stdout
