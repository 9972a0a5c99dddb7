"""Reading tables from HTML: locate, grid (HTML §4.9.12.1), headers, values, the pipeline."""
