"""Shared pytest configuration.

`--update` regenerates the worked cases' expected JSON (worked_cases/*.expected.json) from
the current output; without it those files are only compared, never written.
"""

from __future__ import annotations


def pytest_addoption(parser):
    parser.addoption(
        "--update", action="store_true", default=False,
        help="rewrite worked_cases/*.expected.json from the current results (review the diff)")
