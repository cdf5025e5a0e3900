"""What the window shows, in plain Python (no Qt): results of the core and settings kept in a session."""
