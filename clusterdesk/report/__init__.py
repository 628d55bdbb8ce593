"""Tables (CSV), summaries (JSON) and the report, written atomically."""
