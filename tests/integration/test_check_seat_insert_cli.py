"""`plugfit check` with issue 18's head and plug options: the insert and the counterbore
as a shop types them, and the exit code a CI job reads."""
from __future__ import annotations

PLUG = ("--plug-thread", "M14", "--plug-seat", "flat", "--plug-reach", "9.5", "--plug-gasket-thickness", "1.5",
        "--plug-hex", "16")
HEAD = ("--head-thread", "M14", "--head-seat", "flat", "--head-port-depth", "8", "--head-material", "cast iron")


def test_a_proud_coil_insert_fails_the_check_and_is_named(runner):
    # 12 mm insert in an 8 mm port: 4 mm proud, past one M14x1.25 pitch (1.25 mm, ISO 261)
    result = runner.invoke("check", *PLUG, *HEAD, "--head-insert-kind", "coil", "--head-insert-length", "12 mm")
    assert result.exit_code == 1, result.output
    assert "INSERT_FITTED" in result.output and "INSERT_PROUD" in result.output
    assert "maker's instructions" in result.output


def test_a_counterbore_the_hex_turns_in_passes(runner):
    # a 16 mm six-point hex is 16 x 2/sqrt 3 = 18.48 mm across its corners (exact geometry)
    turning = runner.invoke("check", *PLUG, *HEAD, "--head-counterbore-diameter", "18.6")
    assert turning.exit_code == 0, turning.output
    trapped = runner.invoke("check", *PLUG, *HEAD, "--head-counterbore-diameter", "18.4")
    assert trapped.exit_code == 1 and "HEX_TRAPPED" in trapped.output
