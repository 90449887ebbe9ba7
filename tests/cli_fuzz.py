"""Mutation fuzzing of the command line: mutated `.layers` files (the grammar-aware mutations
of tests/fuzz.py, then byte-level ones: control characters, carriage returns, NUL, bytes
that are not UTF-8) through `layercalc check`, `run`, `run --json` and `export`, each file
in its own subprocess with a time limit.

Invariants: every command ends with exit status 0, 1 or 2, prints no traceback, and a
command that fails writes nothing.

    python -m tests.cli_fuzz --files 300 [--seed S] [--minutes M] [--timeout 60]
"""

from __future__ import annotations

import argparse
import json
import os
import random
import subprocess
import sys
import tempfile
from pathlib import Path

from tests.fuzz import mutate, seeds

ROOT = Path(__file__).resolve().parent.parent
COMMANDS = (["check"], ["run"], ["run", "--json"], ["export", "-o", "{out}"])
BYTES = [b"\r", b"\x00", b"\x01", b"\x1b[2J", b"\xff", b"\xc3", b"\xe2\x80\xae", b"\t",
         b"\r\n", b'"', b"\\", b"\x7f", b"\xef\xbb\xbf"]

# Runs in the subprocess: every command on one file, in one interpreter (start-up paid once);
# anything but a normal return is reported with its traceback.
DRIVER = r"""
import io, json, sys, traceback, contextlib
from layercalc.cli.main import main
results = []
for args in json.loads(sys.argv[1]):
    out, err = io.StringIO(), io.StringIO()
    try:
        with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
            code = main(args)
    except SystemExit as exc:
        code = exc.code if isinstance(exc.code, int) else 2
    except BaseException:
        code, err = "escaped", io.StringIO(traceback.format_exc())
    results.append([args, code, err.getvalue()[-3000:]])
print(json.dumps(results))
"""


def mutate_bytes(data: bytes, rnd: random.Random) -> bytes:
    for _ in range(rnd.randint(1, 3)):
        i = rnd.randrange(len(data) + 1)
        data = data[:i] + rnd.choice(BYTES) + data[i:]
    return data


def make_file(rnd: random.Random, texts: list[str]) -> bytes:
    text = mutate(rnd.choice(texts), rnd)
    data = text.encode("utf-8")
    return mutate_bytes(data, rnd) if rnd.random() < 0.5 else data


def run_file(data: bytes, folder: Path, timeout: float) -> list[str]:
    """The broken invariants for one file (empty when all held)."""
    case = folder / "case.layers"
    case.write_bytes(data)
    out = folder / "book.xlsx"
    argv = [[c[0], str(case), *(part.format(out=out) for part in c[1:])] for c in COMMANDS]
    env = {**os.environ, "PYTHONPATH": os.pathsep.join([str(ROOT), *sys.path[1:]])}
    try:
        done = subprocess.run([sys.executable, "-c", DRIVER, json.dumps(argv)],
                              capture_output=True, text=True, timeout=timeout, env=env,
                              cwd=folder)
    except subprocess.TimeoutExpired:
        return [f"timeout after {timeout} s"]
    problems = []
    if done.returncode != 0:
        return [f"driver exit {done.returncode}: {done.stderr[-2000:]}"]
    for args, code, err in json.loads(done.stdout.strip().splitlines()[-1]):
        if code not in (0, 1, 2) or "Traceback" in err:
            problems.append(f"{' '.join(args)}: exit {code}\n{err}")
        if args[0] == "export" and code != 0 and out.exists():
            problems.append("export failed but wrote its workbook")
    if out.exists():
        out.unlink()
    return problems


def fuzz(files: int, seed: int, timeout: float = 120.0, minutes: float | None = None) -> dict:
    import time

    end = None if minutes is None else time.monotonic() + 60 * minutes
    rnd = random.Random(seed)
    texts = seeds()
    counts = {"files": 0, "clean": 0, "escaped": 0}
    failures = []
    with tempfile.TemporaryDirectory() as name:
        folder = Path(name)
        for _ in range(files):
            if end is not None and time.monotonic() > end:
                break
            data = make_file(rnd, texts)
            problems = run_file(data, folder, timeout)
            counts["files"] += 1
            if problems:
                counts["escaped"] += 1
                failures.append((data, problems))
            else:
                counts["clean"] += 1
    counts["failures"] = failures
    return counts


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__,
                                     formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--files", type=int, default=300)
    parser.add_argument("--seed", type=int, default=0)
    parser.add_argument("--minutes", type=float, default=None,
                        help="stop after this many minutes even if files remain")
    parser.add_argument("--timeout", type=float, default=120.0,
                        help="seconds for the four commands on one file")
    args = parser.parse_args(argv)
    counts = fuzz(args.files, args.seed, args.timeout, args.minutes)
    for data, problems in counts["failures"]:
        print("---- file ----\n" + data.decode("utf-8", "replace")[:2000], file=sys.stderr)
        print("\n".join(problems), file=sys.stderr)
    print(f"fuzzed {counts['files']} files x {len(COMMANDS)} commands: {counts['clean']} "
          f"clean, {counts['escaped']} with a broken invariant")
    return 1 if counts["escaped"] else 0


if __name__ == "__main__":
    sys.exit(main())
