"""The measuring layer: the source's figures from its lines and spectrum.

:mod:`~ftsource.measure.figures` runs the stages in order — :mod:`~ftsource.measure.classify`
(kind, mode comb), :mod:`~ftsource.measure.band` (broadband figures, response, colour),
:mod:`~ftsource.measure.budget` (the centre wavelength's JCGM 100 budget) and
:mod:`~ftsource.measure.width` (width, coherence) — and :mod:`~ftsource.measure.facts` states
what was read and done (input, processing, instrument, health, the line table). The kernels
they use are :mod:`~ftsource.measure.broadband`, :mod:`~ftsource.measure.modes`,
:mod:`~ftsource.measure.coherence`, :mod:`~ftsource.measure.colour` and
:mod:`~ftsource.measure.uncertainty`.
"""
