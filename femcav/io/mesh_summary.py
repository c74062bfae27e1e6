"""The mesh command's printed summary: totals, the worst element, and a table per region."""

from __future__ import annotations

from ..post.mesh_quality import MeshQuality
from ..units import format_length


def mesh_summary(title: str, quality: MeshQuality) -> str:
    lines = [f"{title}: {quality.tetrahedra} tetrahedra, {quality.nodes} nodes, "
             f"minimum quality {quality.min_quality:.3f} (region {quality.worst_region})"]
    width = max([len("region")] + [len(r.name) for r in quality.regions])
    lines.append(f"{'region':<{width}}  {'tetrahedra':>10}  {'mean edge':>12}  "
                 f"{'min quality':>11}")
    for r in quality.regions:
        lines.append(f"{r.name:<{width}}  {r.tetrahedra:>10}  "
                     f"{format_length(r.mean_edge_m, 4):>12}  {r.min_quality:>11.3f}")
    lines.append("quality: mean ratio, 1 for a regular tetrahedron, 0 for a flat one")
    return "\n".join(lines)
