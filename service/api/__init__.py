"""HTTP routers, one module per topic, and the request → case translation."""
