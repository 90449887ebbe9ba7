"""Mutation fuzzing of the .layers language, from the grammar's own tokens and the worked
cases. Invariants: nothing but LayercalcError escapes; `check` and `run` agree.

    python -m tests.fuzz --minutes 10      # a longer run than the test suite's
"""

from __future__ import annotations

import argparse
import random
import re
import sys
import time
from pathlib import Path

import layercalc

ROOT = Path(__file__).resolve().parent.parent
TOKENS = ["title", "note", "option", "cell", "column", "layers", "levels", "end", "scenario",
          "station", "from", "add", "to", "scale", "by", "set", "between", "above", "below",
          "where", "and", "or", "not", "latitude", "longitude", "=", "(", ")", "[", "]", "+",
          "-", "*", "/", "^", "<", "<=", ">=", "==", "!=", ",", '"x"', "0", "1", "-1",
          "2.5e-3", "1e999", "hPa", "degC", "K", "s^-1", "1e-5 s^-1", "T", "Td", "div",
          "p_bottom", "p_top", "thickness", "omega_top", "surface_height", "integrate",
          "adjust", "obrien", "uniform", "from_surface", "ln", "exp", "sqrt", "where",
          "above", "below", "sum", "mean", "min", "max", "upward_sum", "\n", " ", "#", "%"]


def seeds() -> list[str]:
    texts = [p.read_text(encoding="utf-8") for p in sorted((ROOT / "worked_cases")
                                                           .glob("*.layers"))]
    from tests.helpers import BASE_TABLE

    return texts or [BASE_TABLE]


def mutate(text: str, rnd: random.Random) -> str:
    pieces = re.split(r"(\s+)", text)
    for _ in range(rnd.randint(1, 4)):
        i = rnd.randrange(len(pieces)) if pieces else 0
        action = rnd.random()
        if action < 0.3 and pieces:
            del pieces[i]
        elif action < 0.6:
            pieces.insert(i, rnd.choice(TOKENS))
        elif action < 0.8 and pieces:
            pieces[i] = rnd.choice(TOKENS)
        elif pieces:
            j = rnd.randrange(len(pieces))
            pieces[i], pieces[j] = pieces[j], pieces[i]
    return "".join(pieces)


def check_one(text: str) -> str:
    """'valid' or 'invalid'; raises AssertionError when the invariants break."""
    try:
        problems = layercalc.problems(text, is_text=True)
    except layercalc.LayercalcError as exc:  # problems() must not raise at all
        raise AssertionError(f"problems() raised {exc!r}") from exc
    try:
        sheet = layercalc.loads(text)
        for scenario in (None, *sheet.scenarios):
            result = sheet.evaluate(scenario)
            result.summary
        ran = True
    except layercalc.LayercalcError:
        ran = False
    assert ran == (not problems), f"check says {len(problems)} problems, run ok={ran}"
    return "valid" if ran else "invalid"


def run(seconds: float, seed: int = 0) -> dict[str, int]:
    rnd = random.Random(seed)
    base = seeds()
    counts = {"valid": 0, "invalid": 0}
    deadline = time.monotonic() + seconds
    while time.monotonic() < deadline:
        text = mutate(rnd.choice(base), rnd)
        try:
            counts[check_one(text)] += 1
        except AssertionError:
            raise
        except Exception:
            print("---- input that escaped the error class ----\n" + text, file=sys.stderr)
            raise
    return counts


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__,
                                     formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--minutes", type=float, default=1.0)
    parser.add_argument("--seed", type=int, default=0)
    args = parser.parse_args(argv)
    counts = run(args.minutes * 60.0, args.seed)
    print(f"fuzzed {sum(counts.values())} texts: {counts['valid']} valid, "
          f"{counts['invalid']} invalid; no escapes, check and run agreed")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
