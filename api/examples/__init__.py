"""Example plant files (fictional plants)."""

from pathlib import Path

EXAMPLES = Path(__file__).resolve().parent
DEMO_PLANT = EXAMPLES / "demo_plant.yaml"
