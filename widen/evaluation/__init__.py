"""Search impact on labelled queries: a tantivy index of a postings file, runs, metrics, report, scorecard."""
