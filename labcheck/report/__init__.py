"""What people read: results.json and gradebook.csv (``outputs``), the HTML sheets and summaries built
from view models (``render``; templates never compute), the blank student template (``template``) and PDFs
(``pdf``).

May import every layer below (base to grading); never the run, course, demo or command-line layers.
"""
