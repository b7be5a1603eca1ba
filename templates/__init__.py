"""Starter spec templates, shipped as package data (footgen.templates)."""
