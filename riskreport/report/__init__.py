"""The brief: numbers phrased in Python, charts as matplotlib Figures, jinja2 + weasyprint."""
