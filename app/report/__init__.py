"""The design report (HTML, PDF) of a session: headless, never imports the window."""
