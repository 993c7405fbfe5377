"""Tests of lensinfer.stellar (a package, so its module names cannot clash with other folders)."""
