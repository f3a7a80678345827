"""Layer rules: the core (and the steps/tables the QGIS plugin vendors) import numpy only."""
from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

ENGINE = Path(__file__).resolve().parents[1] / "engine"
CORE_MODULES = [
    "slipsense",
    "slipsense.errors",
    "slipsense.core.orientation",
    "slipsense.core.raster",
    "slipsense.core.planes",
    "slipsense.core.traces",
    "slipsense.core.kinematics",
    "slipsense.core.netslip",
    "slipsense.steps.netslip",
    "slipsense.tables.netslip",
    "slipsense.core.stress",
    "slipsense.steps.stress",
    "slipsense.tables.stress",
    "slipsense.core.sections",
    "slipsense.steps.sections",
    "slipsense.tables.sections",
    "slipsense.steps",
    "slipsense.tables",
]


@pytest.mark.parametrize("module", CORE_MODULES)
def test_core_imports_numpy_only(module):
    code = (
        "import sys, json; base = set(sys.modules); import " + module + ";"
        "new = {m.split('.')[0] for m in set(sys.modules) - base};"
        "print(json.dumps(sorted(new)))"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=ENGINE,
                         env={"PYTHONPATH": str(ENGINE)}, check=True).stdout
    third_party = set(json.loads(out)) - set(sys.stdlib_module_names) - {"slipsense"}
    assert third_party == {"numpy"}, third_party


def test_library_never_imports_cli():
    for path in (ENGINE / "slipsense").rglob("*.py"):
        if "cli" in path.parts:
            continue
        text = path.read_text()
        assert "from .cli" not in text and "slipsense.cli" not in text and "from ..cli" not in text, path
