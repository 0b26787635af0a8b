"""pandera models, one per table stage."""
