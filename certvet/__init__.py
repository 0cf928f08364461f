"""certvet: desk audit of the schedule of test results in BS 7671 electrical certificates."""

__version__ = "0.1.0"
