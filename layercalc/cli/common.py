"""What the commands share: loading a case, writing outputs (all or none, never over an
existing file unless asked), output names that fit their format, and the worked cases."""

from __future__ import annotations

import os
import sys
from itertools import combinations
from pathlib import Path

from layercalc.errors import InputError, OutputError, UsageError

DEMO_CASE = "midlevel_warming"
PLOT_SUFFIXES = (".png", ".svg", ".pdf")


# Every command's file arguments, by argparse destination: what it reads and what it writes
# (with the option's name for messages). A new command or option that names a file is one
# entry here, and refuse_clashing_paths then covers it.
INPUT_DESTS = ("case", "cases", "workbook", "file", "sheet", "station_table")
OUTPUT_DESTS = {"output": "-o", "csv": "--csv", "xlsx": "--xlsx", "plot": "--plot",
                "json": "--json", "tendency_map": "--tendency-map", "omega_map": "--omega-map"}


def same_file(a: str, b: str) -> bool:
    """True when two paths name one file: the same inode when both exist (symlinks, hard
    links, another spelling), else the same absolute path with links resolved."""
    try:
        return os.path.samefile(a, b)
    except OSError:
        return os.path.realpath(a) == os.path.realpath(b)


def refuse_ignored_options(args) -> None:
    """Before any work: an option the command would silently ignore is a usage error (an
    empty file name, --force with nothing to replace, report options beside --json)."""
    for dest, flag in OUTPUT_DESTS.items():
        if getattr(args, dest, None) == "":
            raise UsageError(f"{flag} '': an empty file name", hint=f"give {flag} a file name, "
                             "or leave the option out")
    if getattr(args, "force", False) and not getattr(args, "output", None):
        raise UsageError("--force without -o: there is no file to replace",
                         hint="give -o FILE, or leave --force out")
    if getattr(args, "command", None) != "run":
        return
    if not args.json:
        return
    ignored = [flag for flag, given in (
        ("--every-column", args.every_column),
        ("--units", args.units is not None and not args.csv),
        ("--heights", args.heights is not None and not args.csv)) if given]
    if ignored:
        csv = "" if ignored[0] == "--every-column" else "; with --csv FILE it applies to the CSV"
        raise UsageError(f"{ignored[0]} has no effect with --json: the JSON document holds "
                         "every column, in SI units", hint=f"leave {ignored[0]} out{csv}")


def refuse_clashing_paths(args) -> None:
    """Before any work: an output that is one of the inputs (it would replace the input), or
    two outputs on one path (one would be lost), is a usage error."""
    inputs: list[str] = []
    for dest in INPUT_DESTS:
        value = getattr(args, dest, None)
        inputs.extend([value] if isinstance(value, str) else
                      [v for v in value or () if isinstance(v, str)]
                      if isinstance(value, list) else [])
    outputs = [(flag, value) for dest, flag in OUTPUT_DESTS.items()
               if isinstance(value := getattr(args, dest, None), str)]
    for flag, path in outputs:
        for source in inputs:
            if same_file(path, source):
                raise UsageError(f"{flag} {path} is the input {source}: writing it would "
                                 "replace the input; nothing was written",
                                 hint="give the output another name")
    for (flag_a, a), (flag_b, b) in combinations(outputs, 2):
        if same_file(a, b):
            raise UsageError(f"{flag_a} and {flag_b} both name {a}: one output would be "
                             "lost; nothing was written",
                             hint="give each output its own file")


def load_case(path: str):
    """A sheet from a .layers file or an .xlsx workbook."""
    from layercalc.api import load

    return load(path, reuse_checks=True)


def emit(text: str, output: str | None, force: bool = False) -> None:
    """Text to `output` (a read-only file replaced only with `force`) or to the screen."""
    if output:
        from layercalc.files import write_text_atomic

        write_text_atomic(output, text, replace_read_only=force)
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



def need_scenario(sheet, name: str | None) -> None:
    """--scenario NAME must name one of the sheet's scenarios (or base): a usage error."""
    if name in (None, "base") or name in sheet.scenarios:
        return
    from layercalc.names import close_names, did_you_mean

    close = close_names(name, sheet.scenarios, 3)
    raise UsageError(f"--scenario {name}: this sheet has no scenario named '{name}'",
                     hint=did_you_mean(close) or "scenarios in this sheet: "
                     + (", ".join(sheet.scenarios) or "none"))


def need_suffix(path: str, suffixes: tuple[str, ...], what: str) -> None:
    if Path(path).suffix.lower() not in suffixes:
        raise UsageError(f"cannot write {what} to '{path}': the name must end in "
                          + " or ".join(suffixes),
                          hint=f"e.g. -o {Path(path).stem or 'out'}{suffixes[0]}")
