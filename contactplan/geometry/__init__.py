"""Station geometry: Earth orientation, topocentric look angles, passes, shadows.

* :mod:`~contactplan.geometry.earth` — WGS84 stations, fast GCRS -> ITRS rotation (IAU 2006/2000A, IERS EOP)
* :mod:`~contactplan.geometry.topo` — azimuth, elevation, range, range rate, light time (:func:`look_angles`)
* :mod:`~contactplan.geometry.mask` — effective elevation limit (minimum elevation and horizon mask)
* :mod:`~contactplan.geometry.refraction` — ITU-R P.834 radio refraction (scenario switch)
* :mod:`~contactplan.geometry.search` — vectorised event refinement (roots and extrema)
* :mod:`~contactplan.geometry.passes` — the pass finder (:class:`Pass`, :func:`find_passes`, :func:`shadows`)
* :mod:`~contactplan.geometry.shadow` — Earth and Moon penumbra/umbra passages (conical model)
* :mod:`~contactplan.geometry.analytic` — simple analytic ephemerides for checks and benchmarks
"""
