"""The spec JSON Schema, shipped as package data (footgen.schemas)."""
