"""Bundled text templates of bcgen (installed as the package ``bcgen.templates``)."""
