"""envelope: from a thermal-camera survey of a house to numbers that hold up.

Modules are named by the physics they hold; see DEVELOPERS.md for the map.
"""

__version__ = "0.1.0"
