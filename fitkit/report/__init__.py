"""Ways to show a result: a readable table, plots, an HTML page."""
