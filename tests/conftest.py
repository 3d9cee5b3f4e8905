"""Test configuration: hypothesis profiles (fast for CI, long on demand), and a derivation
cache private to this test session (the suite never reads or fills the user's cache)."""
import os
import tempfile

from hypothesis import settings

settings.register_profile("ci", max_examples=200, deadline=None)
settings.register_profile("long", max_examples=10_000, deadline=None)
settings.load_profile(os.environ.get("BHCHEM_HYPOTHESIS_PROFILE", "ci"))

# inherited by every subprocess the tests start (the console-script tests included).  One
# folder per test session: the pytest-xdist workers inherit the controller's environment and
# use its folder, so a family derived by one worker is loaded, not derived again, by the other
# (writes are atomic: a concurrent reader sees a whole file or none).
_SESSION_CACHE = "BHCHEM_TEST_SESSION_CACHE_DIR"
if not (os.environ.get("PYTEST_XDIST_WORKER") and os.path.isdir(os.environ.get(_SESSION_CACHE, ""))):
    os.environ[_SESSION_CACHE] = tempfile.mkdtemp(prefix="bhchem-test-cache-")
os.environ["BHCHEM_CACHE_DIR"] = os.environ[_SESSION_CACHE]


def pytest_collection_modifyitems(config, items):
    """Tests marked ``slow`` run first (otherwise in their usual order).  With pytest-xdist's
    ``--dist worksteal`` (pyproject addopts) an idle worker takes queued tests from the other's
    tail, so the two workers end on short tests and finish together, instead of one of
    them starting a long test when the other has nothing left."""
    items.sort(key=lambda item: item.get_closest_marker("slow") is None)
