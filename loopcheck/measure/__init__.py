"""Measurements of each power stage through the real copper.

Every measurement is a ``loopcheck.findings.Measurement`` whose ``quantity`` is one of the names
below; the rule deck refers to these names, the reports print them. ``path.<name>`` stands for
each high-current path: ``input``, ``switch_node``, ``output``, ``ground`` (the input
current's return) and ``load_return`` (the load current's return).
"""

# quantity -> (unit, plain label)
QUANTITIES: dict[str, tuple[str, str]] = {
    "hot_loop.area": ("mm2", "hot-loop area"),
    "hot_loop.inductance": ("nH", "hot-loop inductance"),
    "hot_loop.vias": ("count", "vias in the hot loop"),
    "hot_loop.overshoot": ("%", "switching overshoot L di/dt, share of input voltage"),
    "hot_loop.ringing_frequency": ("MHz", "hot-loop ringing frequency"),
    "hot_loop.edge_energy": ("nJ", "energy in the loop inductance per edge"),
    "input_cap.path_length": ("mm", "input capacitor to switch, copper path"),
    "input_cap.straight_distance": ("mm", "input capacitor to switch, straight line"),
    "input_cap.inductance": ("nH", "input capacitor connection inductance"),
    "controller_decoupling.path_length": ("mm", "controller supply pin to its capacitor, copper path"),
    "sense.kelvin_error": ("%", "sense error from shared copper, share of the resistor's drop"),
    "sense.pair_area": ("mm2", "area between the sense traces"),
    "sense.switch_node_clearance": ("mm", "closest approach of sense/feedback copper to switch-node copper"),
    "path.temperature_rise": ("C", "IPC-2221 temperature rise at the narrowest point"),
    "path.temperature_rise_ipc2152": ("C", "IPC-2152-style temperature rise at the narrowest point"),
    "path.resistance": ("mohm", "path resistance at operating temperature"),
    "path.loss": ("W", "I^2 R loss in the path"),
    "copper_loss": ("%", "copper loss of all high-current paths, share of output power"),
    "layout_loss": ("%", "efficiency points the layout costs"),
    "switch_node.area": ("mm2", "switch-node copper beyond its pads"),
    "switch_node.capacitance": ("pF", "switch-node copper capacitance to neighbouring planes"),
}

PATH_NAMES = ("input", "switch_node", "output", "ground", "load_return")


def path_quantity(path: str, what: str) -> str:
    """``path_quantity("input", "resistance")`` -> ``"path.input.resistance"``."""
    return f"path.{path}.{what}"


def base_quantity(quantity: str) -> str:
    """``"path.input.resistance"`` -> ``"path.resistance"``; other names unchanged."""
    parts = quantity.split(".")
    if parts[0] == "path" and len(parts) == 3:
        return f"path.{parts[2]}"
    return quantity
