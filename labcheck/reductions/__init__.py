"""Pure reductions: numbers in, numbers out, SI units.  Nothing here reads files or prints.

Base layer: may import only the standard library, numpy and geographiclib (and :mod:`labcheck.base`)."""
