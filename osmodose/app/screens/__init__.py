"""The app's screens: the check itself, help, the formulary table and saving."""
