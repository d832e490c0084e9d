"""Circuit models: design -> element netlist (arrays) -> state space -> steady state."""
