"""HTML templates and stylesheet for feedback sheets and section summaries."""
