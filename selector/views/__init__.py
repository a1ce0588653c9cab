"""What results look like: terminal tables, CSV/JSON shapes, the HTML report and plots.
Views compute nothing a test would want to check on its own, and never import the CLI."""
