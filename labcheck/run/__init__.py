"""A section's run (``batch``): every input graded in isolation (one file never costs another), the outputs
staged and moved into place only when complete, in worker processes when asked.

May import every layer below (base to report).
"""
