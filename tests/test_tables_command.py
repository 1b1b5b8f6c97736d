"""``diagap tables``: build or look up the fast path's global tables (diagap.fastpath.catalog).

Reference for the one table built here (the taut clamped disk, τ beyond the plate model): the
closed-form centre deflection of a clamped plate under tension and uniform pressure
(Timoshenko & Woinowsky-Krieger, Theory of Plates and Shells, 2nd ed. 1959, §94 [from memory]).
The command's plumbing is under test here; the tables' accuracy is tests/test_fastpath_plates.py's.
"""
from __future__ import annotations

import pytest

from diagap.cli import main


@pytest.fixture()
def empty_cache(tmp_path, monkeypatch):
    from diagap.fastpath import store

    monkeypatch.setenv("DIAGAP_CACHE_DIR", str(tmp_path / "cache"))
    monkeypatch.setattr(store, "_HELD", {})  # no table read earlier in this process
    return tmp_path


def test_check_builds_nothing_and_lists_every_table(empty_cache, capsys):
    from diagap.fastpath.catalog import table_names

    assert main(["tables", "--check", "--accuracy", "draft"]) == 0
    out = capsys.readouterr().out
    for name in table_names():
        assert f"{name} " in out
    assert f"0 of {len(table_names())} tables available" in out
    assert not (empty_cache / "cache").exists() or not any((empty_cache / "cache").rglob("*.npz"))


def test_build_then_read_one_table(empty_cache, capsys):
    name = "plate-circle-clamped-membrane"
    assert main(["tables", "--only", name, "--accuracy", "draft", "--workers", "1"]) == 0
    out = capsys.readouterr().out
    line = next(x for x in out.splitlines() if name in x)
    assert " built " in line and "certified" in line and "uncertified" not in line
    points = int(line.split()[2])
    assert points > 5
    from diagap.fastpath import store

    store._HELD.clear()  # a later call reads the disk cache, computes nothing
    assert main(["tables", "--only", f"{name},rim", "--check", "--accuracy", "draft"]) == 0
    out = capsys.readouterr().out
    line = next(x for x in out.splitlines() if name in x)
    assert " read " in line and int(line.split()[2]) == points
    assert "rim" in out and "missing" in out and "1 of 2 tables available" in out


def test_the_membrane_table_gives_the_taut_plate_deflection(empty_cache):
    """The built table answers a taut clamped disk's centre compliance to 1e-3: the closed form
    of the clamped plate under tension, w(0)/p = a⁴/D·[1/(4τ) − (I0(k) − 1)/(2τ k I1(k))],
    k = √τ (Timoshenko & Woinowsky-Krieger 1959, §94 [from memory]), which tends to the
    membrane's a²/(4T) with the bending boundary layer's 2/k less."""
    import math

    from scipy.special import i0e, i1e

    from diagap import demo_design, with_overrides
    from diagap.fastpath.plate import plate_outputs
    from diagap.fem.plate.solver import MEMBRANE_TAU

    main(["tables", "--only", "plate-circle-clamped-membrane", "--accuracy", "draft",
          "--workers", "1"])
    d = with_overrides(demo_design().with_accuracy("draft"),
                       {"diaphragm.residual_stress": 300e6, "diaphragm.thickness": 0.2e-6})
    dia = d.diaphragm
    tension = dia.residual_stress_pa * dia.thickness_m
    bend = dia.youngs_modulus_pa * dia.thickness_m**3 / (12 * (1 - dia.poisson_ratio**2))
    tau = tension * dia.size_m**2 / bend
    assert tau > MEMBRANE_TAU  # the membrane piece answers
    k = math.sqrt(tau)
    # (I0(k) − 1)/I1(k) with exponentially scaled Bessel functions (no overflow)
    ratio = (i0e(k) - math.exp(-k)) / i1e(k)
    expected = dia.size_m**4 / bend * (1 / (4 * tau) - ratio / (2 * tau * k))
    assert expected == pytest.approx(dia.size_m**2 / (4 * tension) * (1 - 2 / k), rel=1e-4, abs=0)
    out = plate_outputs(dia, "draft", mapper=None)
    assert out["mechanics.center_compliance_m_per_pa"] == pytest.approx(expected, rel=1e-3, abs=0)


@pytest.mark.parametrize("argv,text", [
    (["tables", "--only", "nonsense"], "--only 'nonsense': unknown table"),
    (["tables", "--accuracy", "coarse"], "invalid choice"),
    (["tables", "--workers", "0"], "--workers"),
])
def test_bad_options_one_line_exit_2(argv, text, capsys, empty_cache):
    try:
        rc = main(argv)
    except SystemExit as exc:  # argparse's own usage errors
        rc = exc.code
    err = capsys.readouterr().err
    assert rc == 2
    assert text in err and "Traceback" not in err and len(err.strip().splitlines()) == 1
