"""Tolerance and yield: what fraction of built boards meets the match across the target band.

- :mod:`footgen.yieldmc.tolerance`  the spec's ``tolerances`` section, the parameter registry
  (each spread maps to a perturbation of the physics model or of the matching parts) and the
  seeded draws (one random stream per sample, so any worker gives the same numbers);
- :mod:`footgen.yieldmc.surrogate`  sensitivities from full solves and the resonance-shift
  surrogate built on them;
- :mod:`footgen.yieldmc.run`        the Monte Carlo, its check against full solves, design
  centring, the JSON summary;
- :mod:`footgen.yieldmc.executors`  local processes or a Dask cluster;
- :mod:`footgen.yieldmc.plots`      histograms and the cloud of S11 curves.

These are estimates: they never replace measuring built boards.
"""
