"""Presentation: terminal tables, JSON, and the safety caution. SI is converted for display here."""
