"""Report writers: terminal table, report.json, hotspots.csv (and, where available, images and a page)."""
