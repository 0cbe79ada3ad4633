"""Collecting readings on line: ``firstrung serve`` (the design's section 3, "Collecting readings on line").

An application-layer room: it asks the registry of methods (:mod:`firstrung.methods`) for
each kind of log's columns, row parser and check, so a new method gets its form from its
registry entry and its ``log`` and ``check`` modules alone.

``kinds``      each collected kind of log: its columns, its reader and its check
``export``     stored readings as the CSV log the readers accept (formula-safe)
``verdict``    a submitted reading parsed and checked with the method's own code
``store``      the SQLite store (one writer, WAL), tokens included
``tokens``     link tokens and the forms' anti-forgery tokens
``schools``    schools that join an open network: their positions checked, their log cells
``join``       the join page of an open network
``web``        what every page shares: security headers, limits, the form reader
``forms``      what a phone form shows: fields, choices, the site's predictions
``app``        the ASGI application (Starlette)
``server``     binding, the links file, running under uvicorn
"""
