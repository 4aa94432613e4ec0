"""``reflib serve``: one process owns the library file and serves the group over HTTP.

A thin shell over :class:`reflib.library.Library`, like the CLI: ``app`` lists the routes,
``api`` answers the JSON API, ``views`` and ``pages`` the server-rendered web page, ``auth`` the
token check, ``uploads`` reads uploaded files from bytes, ``worker`` runs every library call on
one thread. Imports reflib.library, reflib.io and reflib.report; nothing imports it but the CLI.
"""
