"""execute."""
