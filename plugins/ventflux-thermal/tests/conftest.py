"""Long checks of this plugin (marked ``slow``) run only when asked for: ``python -m pytest -m slow``."""

from pathlib import Path

import pytest

HERE = Path(__file__).parent


def pytest_collection_modifyitems(config, items):
    if "slow" in (config.getoption("-m") or ""):
        return
    skip = pytest.mark.skip(reason="slow check: run with -m slow")
    for item in items:
        if "slow" in item.keywords and HERE in Path(item.path).parents:
            item.add_marker(skip)
