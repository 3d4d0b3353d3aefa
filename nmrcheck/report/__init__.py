"""Reports: plots, HTML pages and text tables of nmrcheck results."""
