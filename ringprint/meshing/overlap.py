"""Overlapping parts: which part owns which share of an edge."""

import dataclasses

import numpy as np

from ringprint.errors import RingprintError
from ringprint.meshing._boxes import COMPONENTS, EdgeBox


def resolve_overlaps(fills, shapes, rank=None):
    """Clip overlapping fill fractions so that every sub-ray is shared out at most once.

    Rule: parts claim edges in order of decreasing overlap ``rank``; among equal
    ranks (or with no ranks) the part later in ``fills`` wins. Along each
    sub-ray a part keeps ``min(f, 1 - claimed)`` where ``claimed`` is what the parts
    before it took. This is exact when the parts do not overlap (nothing is clipped)
    and when an overlapping part lies wholly inside the winner along the segment,
    the usual case (a screw in a frame, a battery in a housing). Surface-cut masks of
    a winner clear nothing: a conductor sheet stays where it is; nor do the exact
    edge-line and face fractions of conformal metal (a conductor keeps its whole
    shape where a higher-ranked dielectric overlaps it).

    Parameters
    ----------
    fills : list of PartFill
    shapes : dict
        Full edge-array shapes ``{"x": (Nx-1, Ny, Nz), "y": ..., "z": ...}``.
    rank : list of float or None
        One per fill (the case's ``overlap_rank``); larger wins.

    Returns
    -------
    list of PartFill
        Same order as ``fills``; fractions clipped, so that for each edge and sub-ray
        ``sum over parts <= 1`` and the rest is background.
    """
    if rank is not None and len(rank) != len(fills):
        raise RingprintError(f"rank has {len(rank)} entries for {len(fills)} parts: give one per part")
    prio = np.zeros(len(fills)) if rank is None else np.asarray(rank, float)
    # stable sort on (-rank, -position): higher rank first, then later part first
    order = sorted(range(len(fills)), key=lambda i: (-prio[i], -i))
    solids = [i for i in order if fills[i].fractions is not None]
    n = {fills[i].subrays for i in solids}
    if len(n) > 1:
        raise RingprintError(f"parts were voxelized with different subrays {sorted(n)}: use one value")
    new = {i: {} for i in solids}
    for comp in COMPONENTS:
        if not solids:
            break
        claimed = np.zeros((next(iter(n)) ** 2,) + tuple(shapes[comp]), np.float32)
        for i in solids:
            box = fills[i].fractions[comp]
            sl = (slice(None),) + box.slices
            kept = np.minimum(box.data, 1.0 - claimed[sl])
            np.maximum(kept, 0.0, out=kept)
            claimed[sl] += kept
            new[i][comp] = EdgeBox(box.offset, kept)
    out = []
    for i, f in enumerate(fills):
        out.append(f if i not in new else dataclasses.replace(f, fractions=new[i]))
    return out
