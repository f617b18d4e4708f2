"""Built-in rules, one module each (installed as ``lintamp.rules``)."""
