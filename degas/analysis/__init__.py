"""Analysis: pure functions from canonical records to frozen ``*Result`` dataclasses.

Conventions stated once for every module here:

* Times are tz-aware UTC; values are in the canonical SI unit of their kind
  (gas flux kg/s, ratio mol/mol, extrusion rate m³/s DRE, volume m³ DRE, depth m).
* A change point is the UTC start time of the new segment (the first sample after the change).
* Lag sign: a **positive lag means gas leads magma output** (gas changes first, magma output follows
  ``lag`` later). Cross-correlations are reported as r(lag) = corr(gas_t, magma_{t+lag}).
* Results carry ``notes``: caveats computed from the data. They never plot, print or write files;
  this package imports neither plotly, the report package nor the CLI.
"""
