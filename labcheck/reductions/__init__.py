"""Pure reductions: numbers in, numbers out, SI units.  Nothing here reads files or prints."""
