import os
import tempfile

# Compiled kernels go to a per-run folder unless the caller chose one, so tests
# never read a cache written by another checkout.
os.environ.setdefault("FLOWKIT_CACHE_DIR", os.path.join(tempfile.gettempdir(), "flowkit-test-cache"))
