"""Small widgets of the main screen, each showing one part of a result."""
