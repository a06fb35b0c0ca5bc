"""Reports: turning an analysis into text for people and documents for machines."""
