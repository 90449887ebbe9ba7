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


def test_the_made_up_bulletin_imports_writes_and_passes_check(tmp_path, monkeypatch, capsys):
    from tests.helpers import cli

    section = README.split("### Real soundings in", 1)[1].split("\n## ", 1)[0]
    bulletin, shown = re.findall(r"```\n(.*?)```", section, re.S)[:2]
    command = re.search(r"`(layercalc import bulletin\.txt [^`]+)`", section).group(1)
    monkeypatch.chdir(tmp_path)
    (tmp_path / "bulletin.txt").write_text(bulletin, encoding="utf-8")
    # the README does not show stations.csv: a made-up row with the 35 m its output shows
    (tmp_path / "stations.csv").write_text("id,latitude,longitude,elevation\n99901,46.5,-31.2,35\n",
                                           encoding="utf-8")
    code, _, err = cli(capsys, *command.split()[1:])
    assert code == 0, err
    written = (tmp_path / "sounding.layers").read_text(encoding="utf-8")
    # every line the README shows is in the written file, in the same order ("..." and
    # the comments are shortened there); the values are the decoder's, not retyped
    lines = iter(written.splitlines())
    for line in shown.rstrip("\n").splitlines():
        if line.strip() in ("...", ""):
            continue
        assert any(candidate == line for candidate in lines), f"README shows {line!r}"
    code, out, err = cli(capsys, "check", "sounding.layers")
    assert (code, out.strip()) == (0, "ok"), err
