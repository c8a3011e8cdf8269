"""Test set-up: the helpers in this folder are importable, and hypothesis is reproducible.

Hypothesis draws the same cases on every run (``derandomize``), so the suite, and CI, give
the same verdict each time. To hunt for new failing inputs, run with fresh random cases:

    PUMPSCREEN_FUZZ=explore .venv/bin/python -m pytest tests/test_fuzz_exports.py

and add any input it finds to tests/corpus/.
"""

import os
import sys
from pathlib import Path

from hypothesis import settings

sys.path.insert(0, str(Path(__file__).parent))

settings.register_profile("reproducible", derandomize=True)
settings.register_profile("explore", derandomize=False)
EXPLORE = os.environ.get("PUMPSCREEN_FUZZ") == "explore"
settings.load_profile("explore" if EXPLORE else "reproducible")
