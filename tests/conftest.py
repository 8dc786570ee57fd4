"""Test-wide settings.

Under CI (``CI`` set) hypothesis runs derandomised, so a submission's result does not depend on
the draw; locally it explores new examples each run, and failures found there become
regression tests.
"""

import os

from hypothesis import settings

settings.register_profile("ci", derandomize=True, print_blob=True)
if os.environ.get("CI"):
    settings.load_profile("ci")
