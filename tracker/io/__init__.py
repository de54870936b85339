"""Importers and builders that feed the services from files (manifests, the demo scenario)."""
