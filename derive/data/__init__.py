"""Package data: demo case and the case-file template."""
