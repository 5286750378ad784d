"""Process plumbing: where the store of a line lives (statedir) and the last-resort exit after a
hang-up (exiting)."""
