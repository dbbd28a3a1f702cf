"""The demo building: a frame of our own, its analysis results and its IFC model
(installed as package data, so that `shearpost demo` works from any install)."""
