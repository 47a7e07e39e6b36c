"""`plugfit check` on torque: the exit code a CI job reads, and the imperial text a
counter clerk reads.

Torque guidance M14x1.25 flat in aluminium 25–30 N·m (seed catalogue, common practice);
fail above the top by more than half (the contract); 1 lbf·ft = 1.355 818 N·m (NIST SP
811, 2008, appendix B).
"""
from __future__ import annotations

import pytest

ALUMINIUM_M14 = ("--plug-thread", "M14", "--plug-seat", "flat", "--plug-reach", "19", "--plug-gasket-thickness",
                 "1.5", "--head-thread", "M14", "--head-seat", "flat", "--head-port-depth", "17.5",
                 "--head-material", "aluminium")


@pytest.mark.parametrize(("torque", "exit_code", "verdict"), [
    ("100", 1, "FAIL"),  # about four times the top of 25–30 N·m: once only a warning, exit 0
    ("40", 0, "WARN"),  # above 30, not above 45
    ("27", 0, "PASS")])
def test_severe_over_torque_fails_the_check_and_its_exit_code(runner, torque, exit_code, verdict):
    result = runner.invoke("check", *ALUMINIUM_M14, "--torque", torque)
    assert result.exit_code == exit_code, result.output
    assert result.output.startswith(f"M14x1.25: {verdict}")


def test_the_imperial_report_reads_at_the_trades_precision(runner):
    result = runner.invoke("check", *ALUMINIUM_M14, "--torque", "26 lbf*ft", "--lubrication", "anti-seize",
                           "--units", "imperial")
    # anti-seize: 15–18 N·m = 11.06–13.28 lbf·ft, shown inside itself at 0.5 lbf·ft: 11.5 to 13.0;
    # 26 lbf·ft = 35.25 N·m, the dry preload of 58.75 N·m, above 45: fail
    assert result.exit_code == 1
    assert "Torque guidance: 11.5 to 13.0 lbf*ft for anti-seize threads" in result.output
    assert "180 deg after finger-tight, with a new gasket (30 deg with a re-used gasket)" in result.output
    assert "plated shells" in result.output
    assert "11.0634" not in result.output and "13.2761" not in result.output
