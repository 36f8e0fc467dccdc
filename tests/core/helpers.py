"""Helpers shared by the core tests."""

import numpy as np

from service.core.cases import reason_texts


def reasons(result):
    """The reason reported for each case of a CaseResults (the first that applies), or None."""
    out = [None] * result.size
    for reason, mask in result.failures:
        mask = np.broadcast_to(mask, result.shape)
        texts, which = reason_texts(reason, mask)
        for case, k in zip(np.flatnonzero(mask), which, strict=True):
            out[case] = out[case] or texts[k]
    return out
