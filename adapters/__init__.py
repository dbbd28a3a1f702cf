"""Readers that turn outside formats into shearpost's members and forces tables."""
