"""Batch stage: procedure files (data only), the run engine, the command line and the demo generator.

``kit.batch.run(procedure, inputs, ...)`` is the entry point for whole lots.
"""

from kit.batch.engine import run

__all__ = ["run"]
