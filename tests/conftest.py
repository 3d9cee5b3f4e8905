"""Test configuration: hypothesis profiles (fast for CI, long on demand), and a derivation
cache private to this test session (the suite never reads or fills the user's cache)."""
import os
import tempfile

from hypothesis import settings

settings.register_profile("ci", max_examples=200, deadline=None)
settings.register_profile("long", max_examples=10_000, deadline=None)
settings.load_profile(os.environ.get("BHCHEM_HYPOTHESIS_PROFILE", "ci"))

# inherited by every subprocess the tests start (the console-script tests included)
os.environ["BHCHEM_CACHE_DIR"] = tempfile.mkdtemp(prefix="bhchem-test-cache-")
