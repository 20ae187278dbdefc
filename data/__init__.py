"""Species database of eqdesign (YAML files read with importlib.resources)."""
