"""Import stage: Touchstone and table files read and checked, folders, cache, atomic writes, the pool."""
