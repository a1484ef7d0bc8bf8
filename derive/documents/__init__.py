"""Document types built from results: the check report, the batch index."""
