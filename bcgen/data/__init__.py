"""Packaged published data tables (see the README of each folder for provenance)."""
