"""Built-in derating policies (YAML), shipped inside the package as ``derate.rules``."""
