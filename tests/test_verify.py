"""`diagap verify` runs the production solvers on published cases; every check must pass and the
deviations must lie within the solvers' own error estimates (factor 3) where they give one.
Sources are named per case in app/verify.py (Timoshenko & Woinowsky-Krieger 1959; Leissa 1969;
scipy Bessel zeros; Nathanson et al. 1967; Griffin et al. 1966; IEC 61672-1:2013)."""
from diagap.cli import main
from diagap.verify import run_checks


def test_all_published_checks_pass_at_normal():
    checks = run_checks("normal")
    assert len(checks) >= 8
    for c in checks:
        assert c.passed, (c.name, c.deviation)
        if c.estimate is not None and c.estimate > 0:
            assert abs(c.deviation) <= 3 * c.estimate + 1e-12, c.name


def test_verify_command_prints_a_table(capsys):
    assert main(["verify"]) == 0
    out = capsys.readouterr().out
    assert "checks pass" in out and "Leissa" in out
