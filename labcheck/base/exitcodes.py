"""labcheck's exit statuses (a module of its own, so that the command line imports nothing heavy for them)."""

EXIT_OK = 0  # every file graded, every roster student present
EXIT_INCOMPLETE = 1  # graded, but some files unreadable (or another lab's) or some students missing
EXIT_USAGE = 2  # a usage, input or spec error: nothing graded, nothing written
EXIT_LABCHECK_FAILED = 3  # labcheck itself failed on some file, or could not write its outputs
