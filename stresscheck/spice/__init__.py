"""Cross-checks against ngspice: one corner of a design as a transient netlist."""
