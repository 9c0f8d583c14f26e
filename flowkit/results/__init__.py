"""Results: one protocol (save by suffix, ``flowkit.load``, xarray, summary, HTML view, provenance)."""

from flowkit.results.base import KINDS, Result, load
from flowkit.results.encoding import decode, encode, plain, value_type

__all__ = ["Result", "load", "KINDS", "encode", "decode", "plain", "value_type"]
