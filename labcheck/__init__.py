"""labcheck: recompute and grade students' field-lab reductions of the Earth's figure."""

__version__ = "0.1.0"
