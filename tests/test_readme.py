"""The README's examples stay true: the complete file-format example loads and evaluates,
and the quick start names files that exist."""

from __future__ import annotations

import re
from pathlib import Path

import layercalc

ROOT = Path(__file__).resolve().parent.parent
README = (ROOT / "README.md").read_text(encoding="utf-8")


def test_the_format_example_loads_and_evaluates():
    section = README.split("## The file format by example", 1)[1]
    example = section.split("```", 2)[1]
    sheet = layercalc.loads(example, name="README example")
    assert sheet.scenarios == ["warmed", "warmed_divergent"]
    for scenario in (None, *sheet.scenarios):
        result = sheet.evaluate(scenario)
        assert "surface_pressure_tendency" in result.cells
    assert layercalc.problems(example, is_text=True) == []


def test_quick_start_and_ci_use_the_same_test_command():
    quick = README.split("## Quick start", 1)[1].split("## ", 1)[0]
    commands = re.findall(r"```\n(.+?)\n```", quick)
    assert len(commands) == 2
    for path in re.findall(r"worked_cases/\S+\.layers", commands[0]):
        assert (ROOT / path).is_file()
    ci = (ROOT / ".ci" / "run").read_text(encoding="utf-8")
    assert commands[1] in ci  # .ci/run runs exactly the README's test command
