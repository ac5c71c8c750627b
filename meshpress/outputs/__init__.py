"""Outputs: what a user reads, looks at or passes on.

In: results from :mod:`meshpress.loads`, :mod:`meshpress.bands` and :mod:`meshpress.sheets`.
Out: the printed tables, the JSON and CSV files (written completely or not at all, never over an input), the 3D
views and plots (pyvista and matplotlib, off-screen), the self-contained HTML report and the VTK exports.
"""
