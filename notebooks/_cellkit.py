"""What every notebook cell file uses: the shared opening cell and the two cell makers."""

#: Cell shared by every notebook: imports and the quick-mode switch.
QUICK = '''import os

import numpy as np
import matplotlib.pyplot as plt

import flowkit

QUICK = os.environ.get("FLOWKIT_QUICK", "") not in ("", "0")  # CI runs every notebook with tiny sizes
def size(full, quick):
    """The full size for real work, the quick one for the CI run."""
    return quick if QUICK else full'''


def md(text: str) -> tuple[str, str]:
    return ("markdown", text.strip("\n"))


def code(text: str) -> tuple[str, str]:
    return ("code", text.strip("\n"))
