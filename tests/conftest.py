"""Shared test settings for the core and command-line tests.

Property-based tests draw the same examples on every run of ``make test`` (hypothesis'
``derandomize``), so CI passes or fails on the code, not on the draw; the wide random
search is ``make fuzz`` (10,000 fresh examples per entry point), and
``LEAPWRIGHT_HYPOTHESIS=explore`` gives these tests fresh draws too.
"""

import os

try:
    from hypothesis import settings
except ImportError:  # Blender's own test runs do not use hypothesis
    pass
else:
    settings.register_profile("repeatable", derandomize=True)
    settings.register_profile("explore", derandomize=False)
    settings.load_profile("explore" if os.environ.get("LEAPWRIGHT_HYPOTHESIS") == "explore" else "repeatable")
