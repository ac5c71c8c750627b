"""Test sheets: a whole test day described in one TOML file.

In: the sheet (car, tap layout, air, runs with their readings, zeros and q source, comparisons, speeds).
Out: :class:`~meshpress.sheets.runs.TestResult`: per-run Cp and loads, per-configuration averages with their
spread and bands, the changes between configurations, air density (CIPM-2007) and the loads and axle loads at
other speeds.
"""
