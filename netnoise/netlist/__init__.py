"""Reading a netlist: statements from the text, then the flat circuit."""

from netnoise.netlist.load import load_netlist, parse_netlist

__all__ = ["load_netlist", "parse_netlist"]
