"""Test-wide settings.

Hypothesis explores new examples on every run when working locally.  On CI (the environment
variable ``CI`` set, as ``.ci/run`` does) the examples are derandomized, so that a clean machine
runs the same examples every time and a result does not depend on luck; a failure hypothesis
finds locally is then kept as an explicit ``@example`` in the test.
"""

from __future__ import annotations

import os

from hypothesis import settings

settings.register_profile("ci", derandomize=True, print_blob=True)
if os.environ.get("CI"):
    settings.load_profile("ci")
