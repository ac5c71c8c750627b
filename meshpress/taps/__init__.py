"""Taps and readings: where the taps are and what they read.

In: a tap table (CSV in either common dialect, or .xlsx) with names and positions in the mesh's unit and axes,
optionally values (Pa or Cp); for a test day, the logged readings and zero files of each run.
Out: :class:`~meshpress.taps.layout.TapTable` (validated, in the vehicle frame), then
:class:`~meshpress.taps.projection.ProjectedTaps` (each tap moved onto the surface, with its face, distance and
value), and for runs the reduced readings (steady window, zeros removed, mean Cp per tap with its standard error).
"""
