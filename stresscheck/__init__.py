"""stresscheck: worst-case component stress and derating checks for switch-mode supplies.

Data flows design -> corners -> stresses -> checks -> reports; each step is one module
(``design``, ``corners``, ``engine`` with ``topologies``, ``checks``, ``report``).
"""

__version__ = "0.1.0"
