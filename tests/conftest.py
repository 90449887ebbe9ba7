"""Shared pytest configuration.

`--update` regenerates the worked cases' expected JSON (worked_cases/*.expected.json) from
the current output; without it those files are only compared, never written.

The tests keep layercalc's cache (compiled grammar, reused unit checks) in a folder of their
own, so they neither read nor write the user's cache directory.
"""

from __future__ import annotations

import os
import tempfile

os.environ.setdefault("LAYERCALC_CACHE_DIR", tempfile.mkdtemp(prefix="layercalc-test-cache-"))


def pytest_addoption(parser):
    parser.addoption(
        "--update", action="store_true", default=False,
        help="rewrite worked_cases/*.expected.json from the current results (review the diff)")
