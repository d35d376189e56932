"""Storage: durable, atomic writes for every file osmodose keeps or produces."""
