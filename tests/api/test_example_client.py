"""The example clients of ledger/api/guide.md: the README shows the same ones, and the Python one works.

The Python client is read out of the docs page and run as it stands, in its own process, against the
live test server, so the page and the API cannot drift apart.
"""

from __future__ import annotations

import os
import re
import subprocess
import sys
from pathlib import Path

import pytest

from ledger.chain.models import Entry, EntryKind
from ledger.plans.models import StudyState
from tests.api.conftest import token_text
from tests.factories import collecting_study

ROOT = Path(__file__).resolve().parents[2]
EXAMPLE = re.compile(r"<!-- example-client: (?P<language>\w+) -->\n```\w+\n(?P<code>.*?)```", re.DOTALL)


def example_clients(path: Path) -> dict[str, str]:
    return {match["language"]: match["code"] for match in EXAMPLE.finditer(path.read_text(encoding="utf-8"))}


def test_the_readme_shows_the_same_example_clients_as_the_api_docs():
    documented = example_clients(ROOT / "ledger" / "api" / "guide.md")

    assert set(documented) == {"python", "r"}
    assert example_clients(ROOT / "README.md") == documented


@pytest.mark.django_db(transaction=True)
def test_the_python_example_client_seals_its_result_once_however_often_it_runs(live_server, investigator):
    study = collecting_study(member=investigator)
    environment = {
        **os.environ,
        "FOREBOOK_URL": live_server.url,
        "FOREBOOK_TOKEN": token_text(investigator),
        "FOREBOOK_STUDY": study.code,
    }
    client = example_clients(ROOT / "ledger" / "api" / "guide.md")["python"]

    runs = [
        subprocess.run(
            [sys.executable, "-c", client], env=environment, capture_output=True, text=True, timeout=120, check=False
        )
        for _ in range(2)
    ]

    assert [run.returncode for run in runs] == [0, 0], [run.stderr for run in runs]
    entry = Entry.objects.get(study=study, kind=EntryKind.RESULT_RECORDED)
    assert [run.stdout.strip() for run in runs] == [f"Sealed as ledger entry {entry.seq}"] * 2
    study.refresh_from_db()
    assert study.state == StudyState.REPORTED
