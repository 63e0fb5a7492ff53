"""Browser tests (a package, so that their module names do not clash with tests/web)."""
