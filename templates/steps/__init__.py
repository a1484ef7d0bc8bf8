"""One LaTeX partial per step kind: ``<kind>.tex.j2``."""
