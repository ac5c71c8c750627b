"""Loads: face pressures integrated into forces, moments, coefficients and the axle split.

In: a :class:`~meshpress.bodies.body.Body`, projected taps and a field method (:mod:`meshpress.fields`).
Out: :class:`~meshpress.loads.results.LoadResult`: force and moment about the reference point, lift, drag, side
force, pitching moment, front and rear axle lift, their coefficients on the reference area (given or the computed
frontal area), and the lift distribution along the car; ``compare`` sets several field methods side by side.
"""
