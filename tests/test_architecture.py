"""The Qt boundary and the layer order, checked by tools rather than by hope."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def test_import_clusterdesk_loads_no_qt():
    # Contract from the design notes: the public API is Qt-free.
    code = ("import sys, clusterdesk, clusterdesk.cli; "
            "bad = [m for m in ('PySide6', 'pyqtgraph', 'shiboken6') if m in sys.modules]; "
            "assert not bad, bad")
    subprocess.run([sys.executable, "-c", code], check=True, cwd=ROOT)


def test_import_linter_contracts_hold():
    # Contracts in pyproject.toml [tool.importlinter], checked by import-linter.
    lint = Path(sys.executable).with_name("lint-imports")
    result = subprocess.run([str(lint), "--no-cache"], cwd=ROOT, capture_output=True, text=True)
    assert result.returncode == 0, result.stdout + result.stderr
    assert "broken" not in result.stdout.lower().replace("0 broken", "")
