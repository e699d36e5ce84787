"""The computation core stays usable without the notebook stack (a design rule of the package)."""

from __future__ import annotations

import subprocess
import sys


def test_core_imports_no_widget_or_chart_library() -> None:
    code = (
        "import sys, rankfold\n"
        "t = rankfold.table_from_counts([[3, 1], [1, 3]])\n"
        "t.measures(); t.tests(); rankfold.sweep(t)\n"
        "bad = [m for m in ('ipywidgets', 'altair', 'anywidget') if m in sys.modules]\n"
        "print(','.join(bad))\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "", f"the core imported {out.stdout.strip()}"
