"""kinestat.core: the headless engine (no Qt, ever).

Scheme model and file format (:mod:`.model`, :mod:`.io`), the equilibrium matrix
(:mod:`.assemble`), rank decisions (:mod:`.rank`), the hand count (:mod:`.counting`) and the
verdict (:mod:`.classify`); kinematics and redundancy build on these.
"""
from .io import SchemeError, load, loads, save
from .model import Member, Node, Scheme, Support

__all__ = ["Member", "Node", "Scheme", "SchemeError", "Support", "load", "loads", "save"]
