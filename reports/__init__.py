"""bracewalk reports: content models built from core results, rendered to PDF bytes (reportlab)."""
