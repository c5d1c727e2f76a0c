"""Pipeline layer: what a command calls (the job, results assembly, publishing output folders)."""
