"""Test configuration: hypothesis profiles (fast for CI, long on demand)."""
import os

from hypothesis import settings

settings.register_profile("ci", max_examples=200, deadline=None)
settings.register_profile("long", max_examples=10_000, deadline=None)
settings.load_profile(os.environ.get("BHCHEM_HYPOTHESIS_PROFILE", "ci"))
