"""Brine gravity drainage (schemes are added by the drainage work; ``none`` switches it off)."""
from __future__ import annotations

#: Scheme name -> kernel code.
DRAINAGE_CODES = {"none": 0}


def drainage_parameters(cfg, p):
    """Write the drainage scheme's parameters into the kernel parameter row ``p``."""
    return p
