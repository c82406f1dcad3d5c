"""The code base stays lint-clean (ruff, configured in pyproject.toml): unused imports, shadowed
names and unsorted imports are caught here rather than in review."""

import shutil
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def test_ruff_finds_nothing():
    ruff = shutil.which("ruff") or str(Path(sys.executable).with_name("ruff"))
    completed = subprocess.run(
        [ruff, "check", "--output-format", "concise", "."], cwd=ROOT, capture_output=True, text=True
    )
    assert completed.returncode == 0, completed.stdout + completed.stderr
