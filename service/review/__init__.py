"""The review page at /debug (`routes`), what it shows (`views`) and who may change decisions (`access`)."""
