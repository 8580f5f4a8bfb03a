"""Ephemerides: models, projection of future events, fitting and refits, staleness, upkeep.

Nothing here imports the visibility stage; every stage downstream asks the models
(`vigil.ephemeris.models.Ephemeris`) for epochs, mid-times and their uncertainty.
"""
