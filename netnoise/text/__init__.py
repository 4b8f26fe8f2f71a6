"""The netlist's text: source locations, the grammar, fields, values and expressions."""
