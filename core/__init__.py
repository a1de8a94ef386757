"""kinestat.core: the headless engine (no Qt, ever).

Scheme model and file format (:mod:`.model`, :mod:`.io`), the equilibrium matrix
(:mod:`.assemble`), rank decisions (:mod:`.rank`), the hand count (:mod:`.counting`) and the
verdict (:mod:`.classify`); kinematics and redundancy build on these.
"""
from .classify import Classification, classify
from .io import SchemeError, load, loads, save
from .model import Member, Node, Scheme, Support
from .report_data import check_json

__all__ = ["Classification", "Member", "Node", "Scheme", "SchemeError", "Support", "check_json", "classify",
           "load", "loads", "save"]
