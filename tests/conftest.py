import os
import tempfile

# Compiled kernels go to a per-run folder unless the caller chose one, so tests
# never read a cache written by another checkout.
os.environ.setdefault("FLOWKIT_CACHE_DIR", os.path.join(tempfile.gettempdir(), "flowkit-test-cache"))

# No generic first-section kernels in tests: short-lived test processes (notebooks, README blocks,
# CLI calls) would start a background compile of the flow's own kernel and exit before it ends,
# so every process would pay for it again. The generic path has its own tests (test_sections.py
# compares it bit for bit with the specialized kernel; test_readme.py accepts either).
os.environ.setdefault("FLOWKIT_GENERIC_KERNELS", "0")
