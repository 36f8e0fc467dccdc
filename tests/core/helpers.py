"""Helpers shared by the core tests."""

import numpy as np


def reasons(result):
    """The reason reported for each case of a CaseResults (the first that applies), or None."""
    out = [None] * result.size
    for reason, mask in result.failures:
        for case in np.flatnonzero(mask):
            out[case] = out[case] or reason
    return out
