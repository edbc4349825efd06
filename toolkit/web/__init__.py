"""The browser face of Counterpoise (``counterpoise serve``): server-rendered pages over the library and the
register. ``app`` builds the application, ``forms`` turns the command line's subcommands into forms,
``accounts`` keeps who may sign in. docs/web.md describes it."""
