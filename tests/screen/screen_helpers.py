"""Names shared by the screening tests (imported by name: a conftest module is not importable reliably
when tests of several folders run together, since every folder's is called ``conftest``)."""

from __future__ import annotations

import os
from pathlib import Path

from clusterdesk.analysis import ScanSettings

#: Light settings, so that a run over the folder takes seconds.
SETTINGS = ScanSettings(kmin=1, kmax=3, widths="both", restarts=2, seed=7)


def locked_is_readable(path: Path) -> bool:
    """True when chmod 000 does not stop this user (e.g. running as root)."""
    return os.access(path, os.R_OK)
