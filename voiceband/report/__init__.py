"""Output side: JSON serialisation, plots (the only matplotlib import), HTML."""
