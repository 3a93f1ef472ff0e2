"""Text: the one tokeniser (`tokenize`) and the written forms of a phrase (`forms`)."""
