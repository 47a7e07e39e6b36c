"""`plugfit check --svg FILE`: the drawing of the check, written beside its report."""
from __future__ import annotations

import xml.etree.ElementTree as ET

import pytest

# Contract geometry (fit-check-contract.md): thread end 19.0 − 1.5 = 17.5 mm, tip
# 17.5 + 4.0 = 21.5 mm, piston crown 17.5 + 8.0 = 25.5 mm from the seat face.
FLUSH = ("--plug-thread", "M14", "--plug-seat", "flat", "--plug-reach", "19", "--plug-gasket-thickness", "1.5",
         "--plug-firing-end", "4", "--head-thread", "M14", "--head-seat", "flat", "--head-port-depth", "17.5",
         "--head-piston-clearance", "8")


def test_check_writes_the_drawing_to_scale_and_still_prints_its_report(runner, tmp_path):
    drawing = tmp_path / "fit.svg"
    result = runner.invoke("check", *FLUSH, "--svg", str(drawing))
    assert result.exit_code == 0
    assert result.output.startswith("M14x1.25: PASS")
    root = ET.fromstring(drawing.read_bytes())
    scale, origin = float(root.get("data-px-per-mm")), float(root.get("data-origin-y"))
    features = {e.get("data-feature"): e for e in root.iter() if e.get("data-feature")}
    for name, axial_mm in {"thread_end": 17.5, "tip": 21.5, "piston_crown": 25.5}.items():
        assert float(features[name].get("y1")) == pytest.approx(origin + axial_mm * scale, abs=0.01), name


def test_an_unusable_request_writes_no_drawing(runner, tmp_path):
    drawing = tmp_path / "fit.svg"
    result = runner.invoke("check", *FLUSH[:-2], "--head-piston-clearance", "3 kg", "--svg", str(drawing))
    assert result.exit_code == 2
    assert not drawing.exists()
