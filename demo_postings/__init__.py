"""The invented demo boards: their data tables and the generator that writes dumps from them."""
