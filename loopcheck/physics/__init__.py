"""Physics as pure functions of numbers and numpy arrays, SI units, no Board and no files."""
