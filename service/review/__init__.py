"""The review page at /review (`routes`), what it shows (`views`) and who may change decisions (`access`)."""
