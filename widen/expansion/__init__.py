"""Expansion: a seeker's query becomes weighted neighbour phrases and query text, in one pass through
segmentation, candidates, filters, weights, the result and the query text (`expand`)."""
