"""Reading and writing the user's files safely: spreadsheet-safe CSV cells and the one
CSV writer. Standard library only; every package may use it."""
