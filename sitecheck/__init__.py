"""sitecheck: re-check masonry bearings as built."""
