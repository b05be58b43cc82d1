"""Step rules: each picks the step without searching (and may evaluate once as a guard)."""
