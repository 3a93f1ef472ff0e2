"""What a nightly run makes and the service loads: phrase passes, neighbour tables, the bundle's files and
the store they live in."""
