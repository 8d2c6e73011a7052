"""Floor 0, the output folder's files: the lock and the switch of a round, which files a round owns, the run record, and how records become JSON values."""
