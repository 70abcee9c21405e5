"""Baselines, drift, cost of drift and headroom: the service side of issue 5.

Importing the package declares the stage's result metrics to the results API
(:func:`api.baselines.metrics.register`), so that they can be read and the pipeline
leaves them alone.
"""

from api.baselines.metrics import register as _register_metrics

_register_metrics()
