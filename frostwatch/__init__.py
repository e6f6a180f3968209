"""frostwatch: frost-protection advice for orchards and vineyards.

It advises; the grower decides.
"""

__version__ = "0.1.0"
