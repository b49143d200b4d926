"""Turning results into text: JSON, readable tables, checklists."""
