import os
import tempfile

# Compiled kernels go to a per-run folder unless the caller chose one, so tests
# never read a cache written by another checkout.
os.environ.setdefault("FLOWKIT_CACHE_DIR", os.path.join(tempfile.gettempdir(), "flowkit-test-cache"))

# Sections in tests run on the generic kernel (compiled once for every flow) and never start the
# background compile of a flow's own kernel: the suite builds some sixty flows, most of them for a
# test or two, and each own section kernel costs 15-20 s of compilation (twelve of them, some
# 190 s, in a cold run before). The results are the same bits: test_sections.py compares the two
# kernels crossing by crossing on an unbounded flow, a ball flow, a blow-up and both directions,
# and tests that need the flow's own kernel ask for it (warm_sections(flow, wait=True)).
os.environ.setdefault("FLOWKIT_GENERIC_KERNELS", "only")


#: test files that start real JupyterLab/Chromium or fresh interpreters: run after the unit tests, when
#: the kernels they load are cached (the browser test's set-up took 78 s first in a cold run, 23 s warm)
LATE = ("test_browser.py",)


def pytest_collection_modifyitems(session, config, items):
    """Move the LATE files to the end of the run, keeping every other order."""
    items.sort(key=lambda item: item.path.name in LATE)
