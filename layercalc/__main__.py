"""`python -m layercalc`: the same command as `layercalc`."""

from layercalc.cli.main import main

if __name__ == "__main__":
    raise SystemExit(main())
