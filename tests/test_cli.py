"""The command line: JSON output, --set, and error reporting."""

import json

from flowkit.cli import main


def run_json(capsys, *argv):
    code = main(list(argv) + ["--json"])
    out = capsys.readouterr().out
    return code, json.loads(out)


def test_check_reports_round_off_residuals_for_stf(capsys):
    code, res = run_json(capsys, "check", "stf", "--set", "rotation=0.4", "--points", "300")
    assert code == 0
    assert res["parameters"] == {"rotation": 0.4}
    assert res["divergence_max"] < 1e-13 and res["boundary_normal_max"] < 1e-13
    assert res["stokes_residual_max"] < 1e-12
    assert {"seconds", "compile_seconds"} <= set(res)


def test_flows_lists_every_preset_with_domain(capsys):
    code, res = run_json(capsys, "flows")
    names = {f["name"]: f for f in res["flows"]}
    assert code == 0
    assert {"stf", "hill", "abc", "roberts", "circular", "lorenz", "rossler"} <= set(names)
    assert names["stf"]["domain"] == "ball" and names["abc"]["domain"] == "periodic"
    assert names["circular"]["time_dependence"] == "time-periodic"


def test_describe_gives_formula_and_checks(capsys):
    code, res = run_json(capsys, "describe", "lorenz")
    assert code == 0
    assert res["formula"]["u"] == "sigma*(-x + y)"
    assert res["defaults"]["rho"] == 28.0
    assert abs(res["checks"]["divergence_max"] - (10 + 1 + 8 / 3)) < 1e-12


def test_errors_are_json_with_exit_code_2(capsys):
    code, res = run_json(capsys, "check", "nope")
    assert code == 2 and "unknown flow 'nope'" in res["error"]
    code, res = run_json(capsys, "check", "stf", "--set", "rotation")
    assert code == 2 and "NAME=VALUE" in res["error"]
    code, res = run_json(capsys, "check", "stf", "--set", "rotation=abc")
    assert code == 2 and "not a number" in res["error"]
