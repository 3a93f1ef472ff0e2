"""A reviewer's worklist: after a retrain, the phrases seekers type whose expansions need a look."""
