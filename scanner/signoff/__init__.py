"""Sign-off over time: waivers, comparison of two revisions, results for CI systems.

``waivers`` reads the [[waiver]] tables; ``waiver_match`` and ``waiver_marks`` apply them inside the
scoring stage (a mask beside the noise, marks on the records); ``compare`` matches two reports'
findings by net pair and location; ``junit`` writes the scan as JUnit XML. In: scan results and
report.json files. Out: marked findings, comparisons, XML.
"""
