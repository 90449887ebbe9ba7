"""A short run of the command-line fuzzer (tests/cli_fuzz.py; longer runs by hand)."""

from __future__ import annotations

import json

from tests import cli_fuzz


def test_a_few_mutated_files_through_the_commands():
    counts = cli_fuzz.fuzz(files=3, seed=2026)
    assert counts["files"] == 3
    assert counts["failures"] == [], counts["failures"]


def test_the_fuzzer_reports_an_escape(tmp_path, monkeypatch):
    # a driver whose command ended in a traceback: the invariant must be seen as broken
    escaped = [[["run", "case.layers"], "escaped", "Traceback (most recent call last):"]]
    monkeypatch.setattr(cli_fuzz, "DRIVER", f"print({json.dumps(json.dumps(escaped))})")
    problems = cli_fuzz.run_file(b"layers\nend\n", tmp_path, timeout=60)
    assert problems and "exit escaped" in problems[0]
