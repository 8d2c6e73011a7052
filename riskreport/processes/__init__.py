"""Floor 0, processes: the second core, batch workers that die with their parent, stopping on a signal, progress bars."""
