"""Mode labels from the fields: box index triples and the azimuthal order of bodies of
revolution, against the closed-form mode lists (Pozar, Microwave Engineering, 4th ed., §6.3
and §6.4; from memory)."""

from __future__ import annotations

from pathlib import Path

from femcav.analytic.box import box_modes
from femcav.case import case_from_data
from femcav.runner import solve_case


def solved(geometry: dict, modes: int, regions=None, **mesh):
    data = {"title": "Made-up test part", "geometry": geometry, "regions": regions or {},
            "mesh": {"size": 0.002, **mesh}, "solve": {"modes": modes, "order": 2}}
    case = case_from_data(data, Path("part.toml"))
    return solve_case(case, case.solve)


def test_box_labels_are_the_closed_form_index_triples():
    a, b, d = 0.02286, 0.01016, 0.030
    result = solved({"builder": "box", "width": a, "height": b, "length": d}, 7)
    expected = [name for _, name in box_modes(a, b, d, 16.5e9)][:7]
    assert [m.label for m in result.modes] == expected
    assert {"TE101", "TE102", "TM110"} <= set(expected)


def test_pillbox_labels_give_the_azimuthal_order_and_the_class():
    # TM010 (m = 0, TM), TE111 (a pair, m = 1, TE), ..., and TE011 (m = 0, TE), which is
    # degenerate with the TM111 pair in a pillbox (p'01 = p11): the mesh splits them apart.
    result = solved({"builder": "pillbox", "radius": 0.010, "length": 0.015}, 11, curved=True)
    labels = [m.label for m in result.modes]
    assert labels[0] == "m = 0, TM-like"                      # TM010
    assert labels[1:3] == ["m = 1, TE-like"] * 2              # TE111
    cluster = labels[8:11]                                    # TM111 pair and TE011
    assert sorted(cluster) == ["m = 0, TE-like", "m = 1, TM-like", "m = 1, TM-like"]


def test_unlabelled_parts_stay_unlabelled():
    # a box with a block is neither: no label rather than a guess
    result = solved({"builder": "loaded_box", "width": 0.02, "height": 0.01, "length": 0.03,
                     "block_corner": [0.0, 0.0, 0.0], "block_size": [0.005, 0.01, 0.03]}, 2,
                    regions={"block": {"eps_r": 4.0}})
    assert all(m.label is None for m in result.modes)
