"""HTTP layer: create_app(), the JSON API for lab systems, server-rendered pages for people."""
