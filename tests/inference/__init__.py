"""Tests of lensinfer.inference (a package, so module names cannot clash across folders)."""
