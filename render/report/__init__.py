"""The edges: files, plots and summaries. Nothing here computes physics."""
