"""Choosing the eigen backend and refusing what will not fit in memory. The memory model is
checked against SuperLU's own factor of a real curl-curl matrix (scipy, on this mesh)."""

import json

import pytest
from scipy.sparse.linalg import splu

from femcav.cli import main
from femcav.eigen import pardiso as pardiso_module
from femcav.eigen import selection
from femcav.eigen.factorization import nested_dissection
from femcav.eigen.interface import EigenRequest
from femcav.eigen.memory import superlu_factor_entries
from femcav.memory_room import available_bytes, format_bytes
from femcav.errors import InputError
from femcav.fem.assembly import assemble
from femcav.fem.space import build_space
from femcav.geometry import build_part
from femcav.materials import Material
from femcav.model import make_model

GB = 1e9
LOWEST, NEAR = EigenRequest(count=10), EigenRequest(count=6, target=1e6)


def choose(method="auto", n=50_000, request=LOWEST, order=1, free=20 * GB, library="superlu"):
    return selection.choose(method, n=n, nnz=15 * n, request=request, order=order,
                            library=library, free_bytes=free)


def test_auto_picks_by_request_and_size():
    assert choose().method == "direct"
    big = choose(n=300_000, free=40 * GB)
    assert big.method == "iterative" and "300000 DOFs" in big.reason
    assert choose(n=300_000, free=40 * GB, library="pardiso").method == "direct"
    assert choose(n=300_000, request=NEAR, free=40 * GB).method == "direct"
    assert "order 3" in choose(n=300_000, order=3, free=40 * GB).reason
    squeezed = choose(n=120_000, free=1.5 * GB)    # the factor would not fit, LOBPCG does
    assert squeezed.method == "iterative" and "factorisation" in squeezed.reason
    assert "GB free" in big.describe()


def test_refusals_say_what_to_change():
    with pytest.raises(InputError, match="lowest modes only"):
        choose("iterative", request=NEAR)
    with pytest.raises(InputError, match="supports element order 1, 2, 3"):
        choose("iterative", order=4)
    with pytest.raises(InputError, match='needs about .* or method = "iterative"'):
        choose("direct", n=120_000, free=1.5 * GB)
    with pytest.raises(InputError, match="coarser mesh"):
        choose(n=2_000_000, free=0.5 * GB)
    with pytest.raises(InputError, match="^method: ") as refused:
        choose("fastest")
    assert refused.value.option == "method"     # the case layer names the key (case.in_case)


def test_superlu_factor_model_within_a_factor_two():
    mesh = build_part("box", width=0.02286, height=0.01016, length=0.030, mesh_size=0.0015)
    K, M = assemble(build_space(make_model(mesh, {"inside": Material()}, {}), "E", 1))
    A = (K + 1e4 * M).tocsc()
    perm = nested_dissection(A)
    lu = splu(A[perm][:, perm].tocsc(), permc_spec="NATURAL", diag_pivot_thresh=0.1,
              options={"SymmetricMode": True})
    measured = lu.L.nnz + lu.U.nnz
    modelled = superlu_factor_entries(A.shape[0], A.nnz)
    assert 0.5 < modelled / measured < 2.0


def test_memory_reading_and_units():
    assert available_bytes() > 1e8
    assert format_bytes(3.4e9) == "3.4 GB" and format_bytes(2.5e6) == "2.5 MB"


@pytest.mark.skipif(not pardiso_module.available(), reason="MKL PARDISO not installed")
def test_pardiso_refuses_after_its_analysis():
    mesh = build_part("box", width=0.02, height=0.01, length=0.025, mesh_size=0.003)
    K, M = assemble(build_space(make_model(mesh, {"inside": Material()}, {}), "E", 1))
    with pytest.raises(pardiso_module.TooLarge) as caught:
        pardiso_module.pardiso(K + 1e4 * M, definite=True, memory_limit=1000)
    assert caught.value.needed > 1000


def test_command_line_refuses_a_solve_that_does_not_fit(tmp_path, capsys, monkeypatch):
    case = tmp_path / "case.toml"
    case.write_text('[geometry]\nbuilder = "box"\nwidth = "20 mm"\nheight = "10 mm"\n'
                    'length = "25 mm"\n[mesh]\nsize = "3 mm"\n[solve]\nmodes = 3\n'
                    'method = "direct"\n')
    monkeypatch.setattr(selection, "available_bytes", lambda: 1e6)
    assert main(["solve", str(case), "--out", str(tmp_path / "out"), "-q"]) == 2
    assert "needs about" in capsys.readouterr().err
    assert not (tmp_path / "out").exists()
    monkeypatch.undo()
    assert main(["solve", str(case), "--out", str(tmp_path / "ok"), "-q", "--no-report"]) == 0
    assert json.loads((tmp_path / "ok" / "modes.json").read_text())["dofs"] > 0


def test_both_methods_through_the_solver_agree():
    # Same mesh, same discrete problem: the backends must agree far below the discretisation
    # error; the box closed form (Pozar, Microwave Engineering, 4th ed., §6.3, from memory)
    # bounds both.
    from femcav.analytic.box import lowest_box_frequencies
    from femcav.solver import solve_model

    mesh = build_part("box", width=0.02286, height=0.01016, length=0.030, mesh_size=0.0025)
    model = make_model(mesh, {"inside": Material()}, {})
    runs = {m: solve_model(model, modes=6, method=m) for m in ("direct", "iterative")}
    a, b = ([m.frequency_hz for m in runs[k].modes] for k in ("direct", "iterative"))
    assert max(abs(x / y - 1) for x, y in zip(a, b)) < 1e-8
    assert runs["iterative"].eigen_stats.method == "iterative" and runs["iterative"].passed
    reference = lowest_box_frequencies(0.02286, 0.01016, 0.030, 6)
    assert max(abs(x / y - 1) for x, y in zip(b, reference)) < 1.5e-2


def test_a_complex_symmetric_pencil_goes_to_arnoldi_and_refuses_the_hermitian_only_methods():
    # the Lanczos, LOBPCG and distributed backends assume a Hermitian pencil (common
    # practice: they rely on real Rayleigh quotients); a lossy or open problem is not one
    choose = selection.choose
    common = dict(n=10_000, nnz=200_000, request=EigenRequest(4), order=1, library="superlu",
                  free_bytes=8e9, hermitian=False)
    assert choose("auto", **common).method == "arnoldi"
    assert choose("direct", **common).method == "arnoldi"
    for method in ("iterative", "distributed"):
        with pytest.raises(InputError, match="Hermitian"):
            choose(method, **common)
