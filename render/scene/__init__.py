"""The scene file: reading and checking it, the exhibit it describes, and re-laying its device."""
