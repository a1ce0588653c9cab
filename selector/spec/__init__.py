"""What the user asks for: the rail requirement, quantities and units, preferred values and
stack notation. Standard library only, so every other package may build on it."""
