"""The README's pipeline example runs as printed and prints the analysis' summary and letters."""

from __future__ import annotations

import os
import re
import subprocess
import sys
from decimal import Decimal
from pathlib import Path

from client_test_support import LiveServer

from familywise_client import Client

README = Path(__file__).resolve().parents[1] / "README.md"
PROJECT_README = Path(__file__).resolve().parents[3] / "README.md"  # the project README shows it too

#: An invented plate-reader export: specific activity (U/mg) per well, four buffers.
EXPORT = """buffer,activity
reference buffer,52.10
reference buffer,50.85
reference buffer,53.40
reference buffer,51.72
phosphate pH 7.2,53.05
phosphate pH 7.2,52.20
phosphate pH 7.2,54.13
phosphate pH 7.2,52.61
MOPS pH 7.0,58.40
MOPS pH 7.0,59.92
MOPS pH 7.0,57.60
MOPS pH 7.0,60.21
acetate pH 5.5,47.20
acetate pH 5.5,46.13
acetate pH 5.5,48.00
acetate pH 5.5,45.94
"""


def pipeline_example(text: str) -> str:
    """The code block that reads the CSV export (one in each README)."""
    blocks = [b for b in re.findall(r"```python\n(.*?)```", text, re.S) if "csv.DictReader" in b]
    assert len(blocks) == 1
    return blocks[0]


def test_the_pipeline_example_runs_and_prints_summary_and_letters(tmp_path: Path, live_server: LiveServer) -> None:
    code = pipeline_example(README.read_text(encoding="utf-8"))
    assert len([line for line in code.splitlines() if line.strip()]) <= 10
    assert pipeline_example(PROJECT_README.read_text(encoding="utf-8")) == code, "the two READMEs show the same example"
    assert '"http://127.0.0.1:8000"' in code
    (tmp_path / "plate-0412.csv").write_text(EXPORT, encoding="utf-8")
    run = subprocess.run([sys.executable, "-c", code.replace("http://127.0.0.1:8000", live_server.base_url)],
                         cwd=tmp_path, capture_output=True, text=True, timeout=120,
                         env={**os.environ, "FAMILYWISE_API_KEY": live_server.api_key})
    assert run.returncode == 0, run.stderr

    groups: dict[str, list[Decimal]] = {}
    for line in EXPORT.splitlines()[1:]:
        buffer, activity = line.split(",")
        groups.setdefault(buffer, []).append(Decimal(activity))
    with Client(live_server.base_url, api_key=live_server.api_key) as client:
        expected = client.analysis(groups=groups).followup
    assert expected.letters is not None and len(set(expected.letters.values())) > 1
    assert run.stdout.splitlines() == [
        expected.summary, "  ".join(f"{label}: {letters}" for label, letters in expected.letters.items())]


def test_the_readmes_carry_the_caution() -> None:
    for path in (README, PROJECT_README):
        text = " ".join(re.sub(r"^>\s?", "", path.read_text(encoding="utf-8"), flags=re.M).split())
        assert "supports, and does not replace, a qualified statistician" in text, path
