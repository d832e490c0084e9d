"""A small synthesis run, solved once per test session, for the picture, report and BOM tests.

``small_run()`` searches the invented test brief ``data/briefs/small-crc.toml``
with a small population and returns the result with the nominal figures (and
waveforms) of its picked designs. ``chromium()`` finds the browser for the
report test, or skips it unless ``SUPPLYDESIGN_REQUIRE_BROWSER=1`` (CI sets it).
"""

from __future__ import annotations

import os
import shutil
from functools import lru_cache
from pathlib import Path

import pytest

BRIEF = Path(__file__).parent / "data" / "briefs" / "small-crc.toml"
REQUIRE_BROWSER_ENV = "SUPPLYDESIGN_REQUIRE_BROWSER"


@lru_cache(maxsize=1)
def small_run():
    """(SynthResult, {design index: Figures with waveforms}) of the small test brief."""
    from supplydesign.io.designfile import load_design
    from supplydesign.parts import load_catalog
    from supplydesign.report.pictures import picked, waveform_figures
    from supplydesign.synth.run import SynthOptions, synthesize

    catalog = load_catalog()
    brief = load_design(BRIEF, brief=True, catalog=catalog)
    result = synthesize(brief, catalog, SynthOptions(seed=3, pop_size=24, generations=8))
    idx = picked(result)
    waves = waveform_figures([result.designs[i].design for i in idx])
    return result, dict(zip(idx, waves, strict=True))


def chromium() -> str:
    """Path of the chromium executable; skips the test when there is none, unless the
    environment requires the browser (then the test fails)."""
    for name in ("chromium", "chromium-browser"):
        path = shutil.which(name)
        if path:
            return path
    if os.environ.get(REQUIRE_BROWSER_ENV) == "1":
        pytest.fail(f"chromium is missing and {REQUIRE_BROWSER_ENV}=1")
    pytest.skip("chromium is not installed")
