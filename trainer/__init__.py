"""itinerant: train, evaluate and apply extractors of motion events in travel prose.

The package is laid out in the order a record travels: ``corpus`` -> ``parsing``
-> ``features`` -> ``models`` -> ``evaluation`` -> ``annotation`` -> ``reports``
-> ``gate``; ``cli`` sits on top. See DEVELOPERS.md.
"""

__version__ = "0.1.0"
