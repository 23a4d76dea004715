"""Buildings: panels feeding panels, the roll-up to the service, balancing the tree, its files."""
