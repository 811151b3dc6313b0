"""The full-screen console (Textual). Imported only when the console opens: nothing else needs textual."""
