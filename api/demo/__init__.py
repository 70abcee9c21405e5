"""The demo: a fictional plant, a historian simulator for it, and ``lostwork demo``.

* :data:`PLANT_FILE` — Quellmoor Industrial Park's central utilities (invented), a plant
  file in the ``lostwork-plant/1`` format;
* :mod:`api.demo.simulator` — physically consistent readings for that plant over any
  time range, with the faults of :mod:`api.demo.faults` injected on a schedule;
* :mod:`api.demo.sinks` — where readings go: the REST API (as a historian connector
  would) or the ingest service in-process;
* :mod:`api.demo.shiftlog` — shift-log CSV files as operators would write them;
* :mod:`api.demo.orchestrate` — ``lostwork demo`` from a fresh database to a running
  server with live readings.
"""

from pathlib import Path

PLANT_FILE = Path(__file__).resolve().parent / "quellmoor.yaml"
PLANT_SLUG = "quellmoor-utilities"
