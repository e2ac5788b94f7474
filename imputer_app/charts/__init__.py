"""Matplotlib figures shared by the export, the command line and the app."""
