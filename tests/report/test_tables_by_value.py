"""The tables computed once per distinct value: the same bytes as computed row by row.

Reference: the straightforward route, every row by itself: the posterior
probabilities of every kept value (``Analysis.posterior()``), the
classification summary of every kept row, and the per-row CSV writer
(:func:`clusterdesk.report.csvfile.write_csv` over the rows of
:func:`clusterdesk.report.tables.assignment_table`). The data are synthetic,
seeded readings recorded to 0.01 (so values repeat), with excluded rows,
on a linear and a log scale, with and without a count column, fitted as
exact values and as intervals.
"""

from __future__ import annotations

import json

import numpy as np
import pytest

from clusterdesk.analysis import Analysis, DataChoice, ScanSettings
from clusterdesk.report.csvfile import write_csv
from clusterdesk.report.tables import assignment_table, components_table, summary_dict, write_tables


def _recorded_readings(rng, n: int = 3_000) -> str:
    """Synthetic positive readings from two components, to 0.01, with cells that are excluded."""
    values = np.exp(np.concatenate([rng.normal(1.0, 0.25, n // 2), rng.normal(1.8, 0.2, n - n // 2)]))
    cells = [f"{v:.2f}" for v in rng.permutation(values)]
    for at, cell in zip(rng.choice(n, 40, replace=False), ["n/a", "", "-0.40", "0.00"] * 10):
        cells[at] = cell  # not a number, empty, and (on a log scale) not positive
    counts = rng.integers(1, 4, n)
    return "reading,n\n" + "".join(f"{c},{k}\n" for c, k in zip(cells, counts))


@pytest.mark.parametrize("counts", [None, "n"])
@pytest.mark.parametrize("treatment", ["exact", "intervals"])
@pytest.mark.parametrize("scale", ["linear", "ln"])
def test_written_tables_are_those_computed_row_by_row(tmp_path, rng, scale, treatment, counts):
    analysis = Analysis.from_text(_recorded_readings(rng), DataChoice(column="reading", counts=counts, scale=scale),
                                  ScanSettings(kmin=2, kmax=2, widths="separate", restarts=2, seed=4,
                                               treatment=treatment))
    analysis.run_scan()
    assert analysis.chosen.likelihood == ("exact" if treatment == "exact" else "intervals")
    assert analysis.measurements.summary.rows_kept < analysis.measurements.summary.rows_read  # some excluded
    written = write_tables(analysis, tmp_path / "out")

    table = assignment_table(analysis)
    per_row = write_csv(tmp_path / "assignments.csv", table.header, table.rows)
    assert written["assignments"].read_bytes() == per_row.read_bytes()

    by_row = analysis.classification()  # every kept row by itself
    components = components_table(analysis, classification=by_row)
    expected = write_csv(tmp_path / "components.csv", components.header, components.rows)
    assert written["components"].read_bytes() == expected.read_bytes()
    expected_summary = json.dumps(summary_dict(analysis, classification=by_row), indent=2) + "\n"
    assert written["summary"].read_text(encoding="utf-8") == expected_summary

    groups = analysis.value_groups()
    assert groups.size < analysis.measurements.n // 2  # recorded to 0.01: the values repeat
