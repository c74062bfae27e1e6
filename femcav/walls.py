"""Wall kinds and which field form treats them as essential."""

from __future__ import annotations

from dataclasses import dataclass

PEC, PMC = "pec", "pmc"
KINDS = (PEC, PMC)
# A boundary face that no wall names is metal: the enclosure of a cavity (common practice).
DEFAULT_KIND = PEC


@dataclass(frozen=True)
class Wall:
    kind: str = DEFAULT_KIND


def essential_kind(form: str) -> str:
    """The wall kind whose condition is imposed on the space (n x field = 0) in ``form``.

    E form: n x E = 0 on PEC is essential, PMC is natural. H form: the reverse.
    """
    return {"E": PEC, "H": PMC}[form]
