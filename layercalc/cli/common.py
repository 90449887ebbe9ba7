"""What the commands share: loading a case, writing outputs (all or none, never over an
existing file unless asked), output names that fit their format, and the worked cases."""

from __future__ import annotations

import sys
from pathlib import Path

from layercalc.errors import InputError, OutputError

DEMO_CASE = "midlevel_warming"
PLOT_SUFFIXES = (".png", ".svg")


def load_case(path: str):
    """A sheet from a .layers file or an .xlsx workbook."""
    from layercalc.api import load

    return load(path, reuse_checks=True)


def emit(text: str, output: str | None) -> None:
    if output:
        from layercalc.files import write_text_atomic

        write_text_atomic(output, text)
    else:
        sys.stdout.write(text)


def write_files(outputs: list[tuple[str, bytes]]) -> None:
    """Write several output files all or none (layercalc.files.write_all_or_none)."""
    from layercalc.files import write_all_or_none

    write_all_or_none(outputs)


def refuse_overwrite(path: str, force: bool) -> None:
    target = Path(path)
    if target.exists() and not force:
        raise OutputError(f"{path} exists already; nothing was written",
                          hint="choose another name, or add --force to replace it")
    if target.is_dir():
        raise OutputError(f"{path} is a folder")


def worked_cases_folder() -> Path:
    """The bundled worked cases: inside the installed package, or in a checkout."""
    from importlib import resources

    packaged = resources.files("layercalc").joinpath("worked_cases")
    if packaged.is_dir():
        return Path(str(packaged))
    checkout = Path(__file__).resolve().parents[2] / "worked_cases"
    if checkout.is_dir():
        return checkout
    raise InputError("the worked cases are missing from this copy of layercalc",
                     hint="reinstall layercalc, or run from a checkout of its repository")


def worked_cases() -> dict[str, Path]:
    return {p.stem: p for p in sorted(worked_cases_folder().glob("*.layers"))}


def case_summary(path: Path) -> str:
    """The first comment line after the header rule, as a one-line description."""
    for line in path.read_text(encoding="utf-8").splitlines():
        text = line.lstrip("#").strip()
        if line.startswith("#") and text and not set(text) <= set("-=# "):
            return text
    return ""



def need_suffix(path: str, suffixes: tuple[str, ...], what: str) -> None:
    if Path(path).suffix.lower() not in suffixes:
        raise OutputError(f"cannot write {what} to '{path}': the name must end in "
                          + " or ".join(suffixes),
                          hint=f"e.g. -o {Path(path).stem or 'out'}{suffixes[0]}")
