"""What the report does to be quick must not change what it draws or what a later user of matplotlib gets.

The speed itself is measured by benchmarks/bench_report.py, not here.
"""

from __future__ import annotations

import gc
import subprocess
import sys


def test_the_font_subsetter_loads_only_when_used():
    """The report's import leaves fontTools.subset unloaded (the core fonts never need it); the
    first use loads it whole, so an embedding user of matplotlib in the same process still works."""
    code = (
        "import sys\n"
        "from cctkit.report.build import _import_matplotlib\n"
        "_import_matplotlib()\n"
        "print('fontTools.varLib' in sys.modules)\n"
        "from fontTools import subset\n"
        "print(callable(subset.Subsetter), 'fontTools.varLib' in sys.modules)\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout.split()
    assert out == ["False", "True", "True"]


def test_process_ends_after_leaves_the_report_to_the_exit():
    """Inside, collection stays off even after a report (report_style does not turn it back on);
    on exit the objects are frozen and collection is on again."""
    from cctkit.report.build import process_ends_after, report_style

    assert gc.isenabled()
    frozen = gc.get_freeze_count()
    try:
        with process_ends_after():
            with report_style():
                assert not gc.isenabled()
            assert not gc.isenabled()  # not re-enabled by the report's own pause
        assert gc.isenabled()
        assert gc.get_freeze_count() > frozen
    finally:
        gc.unfreeze()  # this test process goes on: give the objects back to the collector
