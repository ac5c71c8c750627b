"""Bands and planning: how sure each figure is, and where the next taps should go.

In: a body, projected taps with their measurement uncertainties, and the carrier (a coarse copy of the surface
on which covariances are cheap).
Out: the surface Gaussian process (kriging) fitted to the taps, each figure's standard uncertainty and 95 %
interval split into measurement and sampling parts (:class:`~meshpress.bands.uncertainty.UncertaintyResult`), the
band of a change between two configurations, and a greedy plan of new tap positions. The default field method
(:mod:`meshpress.fields.posterior`) is this same model's posterior mean.
"""
