"""The command line: ``main`` (grade, check, template, spec, tune, diff, demo) and ``course`` (the course
record's actions).  Wiring only: options in, the library called, what happened printed.

May import anything.
"""
