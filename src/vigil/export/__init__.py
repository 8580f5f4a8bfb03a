"""Writers for vigil's outputs: CSV, iCalendar, plots; all written atomically."""
