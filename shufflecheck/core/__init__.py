"""Core mathematics of the symmetric group: exact counting rows, partitions, characters
(Murnaghan–Nakayama) and distances to the uniform law. Nothing here knows about shuffles,
files or reports."""
