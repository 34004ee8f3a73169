"""Hand-made graded node axes for the tests (the grid planner is not used, so the
tests know their lattices exactly)."""

import numpy as np


def graded_nodes(fine, coarse, ratio=1.25, n_fine=1, n_coarse=0, until=None, fit=False, reverse=False):
    """Node coordinates from 0: ``n_fine`` steps of ``fine``, steps growing by ``ratio``
    (<= 1.3, the planner's neighbour limit) while below ``coarse``, then ``n_coarse``
    steps of ``coarse`` and more of them until the axis reaches ``until``; ``fit``
    scales every step by one factor so the axis ends exactly on ``until``; ``reverse``
    puts the fine steps at the far end."""
    steps = [fine] * n_fine
    while steps[-1] * ratio < coarse:
        steps.append(steps[-1] * ratio)
    steps += [coarse] * n_coarse
    while until is not None and sum(steps) < until - 1e-12 * until:
        steps.append(coarse)
    steps = np.array(steps)
    if fit:
        steps *= until / steps.sum()
    if reverse:
        steps = steps[::-1]
    return np.concatenate([[0.0], np.cumsum(steps)])


def mirrored(nodes, centre=0.0):
    """``nodes`` (from 0) reflected about 0 and shifted to ``centre``: a symmetric axis
    with a node at the centre."""
    return centre + np.concatenate([-nodes[:0:-1], nodes])
