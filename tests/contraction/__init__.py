"""Tests of lensinfer.contraction (a package, so module names cannot clash across folders)."""
