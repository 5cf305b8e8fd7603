# Files whose names start with "_" are not plug-ins; this one would fail if loaded.
raise RuntimeError("a file starting with '_' must be skipped by discovery")
