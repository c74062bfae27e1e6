"""Follow modes from one solve to the next by field overlap, not by sort order.

Consecutive points of a sweep are solved on different meshes of slightly different parts.
Each mode of the next point is paired with one of the previous point by the assignment on
field overlaps of femcav.post.mode_matching (degenerate clusters as subspaces), so two modes
whose frequencies cross keep their identities. A track ends where its mode finds no
partner (the overlap falls below mode_matching.MIN_OVERLAP: the field changed too much for
the step, or the mode left the solved range).
"""

from __future__ import annotations

from itertools import pairwise


from ..post.mode_matching import result_partners


def track(results, count: int, partners=result_partners) -> list[list[int | None]]:
    """tracks[k][i]: the 0-based index, in results[i].modes, of the mode that the k-th mode
    of results[0] has become (None once the track has ended). ``partners(previous,
    current)``: each current mode's partner among the previous ones (-1: none)."""
    tracks = [[k] for k in range(min(count, len(results[0].modes)))]
    for previous, current in pairwise(results):
        partner = partners(previous, current)
        successor = {int(p): j for j, p in enumerate(partner) if p >= 0}
        for t in tracks:
            t.append(None if t[-1] is None else successor.get(t[-1]))
    return tracks
