"""Pure numpy physics functions: humidity, hypsometric, kinematic, winds."""
