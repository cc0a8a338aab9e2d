"""sampling."""
