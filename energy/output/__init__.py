"""Serialisation only: JSON, CSV and text summaries of results, and atomic file writes."""
