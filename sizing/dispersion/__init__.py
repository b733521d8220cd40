"""Dispersions and margins: Monte Carlo flights of a design, their statistics, sizing to a confidence.

Rooms (data flows down the list):

* ``sampling``     marginals, Gaussian copula, reproducible sample streams
* ``case``         the nominal flight of a file and how one sample perturbs it
* ``flights``      compiled batches of sampled flights, reduced to figures (the workers' case function)
* ``statistics``   probability of meeting the target, percentiles, order-statistics and RSS reserves,
                   rank sensitivities, landing ellipse
* ``run``          streaming into the study store (resume after kill -9), process pool or Dask
* ``confidence``   sizing to a required probability (`sizing solve` with [dispersions].probability)

Preliminary estimates only, not flight clearance.
"""
