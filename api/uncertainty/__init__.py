"""Measurement uncertainty on the service side: bands stored with the results, drift
significance, and the inputs that contribute most (issue 10).

Importing the package declares the band and drift-significance metrics to the results
API (:func:`api.uncertainty.metrics.register`).
"""

from api.uncertainty.metrics import register as _register_metrics

_register_metrics()
