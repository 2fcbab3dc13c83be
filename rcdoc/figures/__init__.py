"""Figures of the design note: schematics and charts drawn from computed data.

Modules here turn results that other layers computed into pictures; they
compute no physics and read no project files.
"""
