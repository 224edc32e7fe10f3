"""Reading and writing: images, tables, sessions, stores. Physics stays in lensmass.core."""
