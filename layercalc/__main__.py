"""`python -m layercalc`: the same command as `layercalc`."""

from .cli import main

if __name__ == "__main__":
    raise SystemExit(main())
