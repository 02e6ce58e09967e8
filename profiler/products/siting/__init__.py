"""Gateway siting over a network run: the set-cover programme and its report."""
