"""Test-wide settings: property tests are deterministic and never fail on a slow machine's timing.

Speed is measured in benchmarks/, never asserted here (DEVELOPERS.md).
"""

from hypothesis import settings

settings.register_profile("tenure", deadline=None, derandomize=True, database=None)
settings.load_profile("tenure")
