"""Presentation: terminal text now, PDF later. Formats what the core computed."""
