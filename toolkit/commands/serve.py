"""Subcommands serve (the browser face) and accounts (who may sign in to it).

Light at import: the web framework, the server and the register are imported inside the run functions.
"""

from __future__ import annotations

import sys

from toolkit.commands._common import add_json, emit


def _register_option(parser) -> None:
    parser.add_argument("--register", metavar="URL", default=None,
                        help="the register: a file path, sqlite:///PATH or postgresql://USER@HOST/DB (default "
                             "$COUNTERPOISE_REGISTER, else register.sqlite3 in the user's data folder)")


# -- serve -----------------------------------------------------------------------------------------------

def configure_serve(parser) -> None:
    parser.epilog = ("Example: counterpoise serve --port 8470   (then open http://127.0.0.1:8470/). Listening on "
                     "another address than 127.0.0.1 needs accounts (counterpoise accounts add).")
    parser.add_argument("--host", default="127.0.0.1", help="address to listen on (default 127.0.0.1, this "
                                                            "computer only)")
    parser.add_argument("--port", default="8470", help="port to listen on (default 8470)")
    _register_option(parser)
    parser.add_argument("--tls-proxy", action="store_true",
                        help="the server sits behind a TLS reverse proxy on this computer: cookies are sent over "
                             "HTTPS only and the proxy's X-Forwarded-For/-Proto headers from 127.0.0.1 are trusted")
    parser.set_defaults(run=run_serve)


def is_loopback(host: str) -> bool:
    """Whether ``host`` is a loopback address (127.0.0.0/8, ::1) or 'localhost'.

    >>> is_loopback("127.0.0.1"), is_loopback("::1"), is_loopback("0.0.0.0"), is_loopback("192.0.2.7")
    (True, True, False, False)
    """
    import ipaddress

    text = host.strip().strip("[]")
    if text.lower() == "localhost":
        return True
    try:
        return ipaddress.ip_address(text).is_loopback
    except ValueError:
        return False


def _port(text: str) -> int:
    from toolkit.errors import BadInput

    if not str(text).isdigit() or not 1 <= int(text) <= 65535:
        raise BadInput(f"--port: {text!r} is not a port; give a whole number from 1 to 65535, e.g. 8470")
    return int(text)


def _host(text: str) -> str:
    import ipaddress

    from toolkit.errors import BadInput

    value = str(text).strip().strip("[]")
    if value.lower() == "localhost":
        return "127.0.0.1"
    try:
        return str(ipaddress.ip_address(value))
    except ValueError:
        raise BadInput(f"--host: {text!r} is not an IP address; give one such as 127.0.0.1 (this computer) or "
                       "the shop-network address of this computer") from None


def run_serve(args) -> int:
    from toolkit.errors import BadInput
    from toolkit.register.store import open_register
    from toolkit.web import accounts

    host, port = _host(args.host), _port(args.port)
    reg = open_register(args.register)
    try:
        loopback = is_loopback(host) and not args.tls_proxy  # a proxy forwards the shop network
        if args.tls_proxy and accounts.count(reg) == 0:
            raise BadInput(f"--tls-proxy: a proxy serves the shop network, which needs accounts, and the register "
                           f"{reg.where} has none; add one first: counterpoise accounts add NAME --role ROLE")
        if not loopback and accounts.count(reg) == 0:
            raise BadInput(f"--host {host}: listening beyond this computer needs accounts, and the register "
                           f"{reg.where} has none; add one first: counterpoise accounts add NAME --role ROLE")
        import uvicorn

        from toolkit.web.app import create_app

        app = create_app(reg, loopback=loopback, tls_proxy=args.tls_proxy)
        shown = f"[{host}]" if ":" in host else host
        print(f"counterpoise serve: http://{shown}:{port}/ (register {reg.where}); Ctrl-C stops", file=sys.stderr)
        config = uvicorn.Config(app, host=host, port=port, log_level="warning", access_log=False,
                                proxy_headers=args.tls_proxy, forwarded_allow_ips="127.0.0.1" if args.tls_proxy
                                else None, server_header=False, timeout_graceful_shutdown=5)
        server = uvicorn.Server(config)
        try:
            server.run()
        except SystemExit as exc:  # uvicorn exits when it cannot bind the port
            if exc.code:
                raise BadInput(f"--port {port}: cannot listen on {shown}:{port} (in use, or not an address of "
                               "this computer)") from None
    finally:
        reg.close()
    return 0


# -- accounts --------------------------------------------------------------------------------------------

def configure_accounts(parser) -> None:
    parser.epilog = ("Examples: counterpoise accounts add anna --role inspector (asks for the password twice); "
                     "counterpoise accounts list; counterpoise accounts remove anna")
    parser.add_argument("action", choices=("add", "list", "remove", "password", "role"),
                        help="add an account, list them, remove one, set a new password, change a role")
    parser.add_argument("name", nargs="?", help="the account's name (letters, digits, . _ @ -)")
    parser.add_argument("--role", help="operator, machinist, planner, inspector or administrator")
    parser.add_argument("--units", default="metric", help="the person's units on the pages: metric or imperial")
    parser.add_argument("--password-stdin", action="store_true",
                        help="read the password from the first line of standard input instead of asking")
    _register_option(parser)
    add_json(parser)
    parser.set_defaults(run=run_accounts)


def _read_password(args) -> str:
    from toolkit.errors import BadInput

    if args.password_stdin:
        line = sys.stdin.readline(2048)
        return line.rstrip("\r\n")
    if not sys.stdin.isatty():
        raise BadInput("password: no terminal to ask on; give --password-stdin and the password on standard input")
    import getpass

    first = getpass.getpass("password: ")
    if getpass.getpass("again: ") != first:
        raise BadInput("password: the two entries differ; nothing was changed")
    return first


def run_accounts(args) -> int:
    from toolkit.errors import BadInput
    from toolkit.register.store import open_register
    from toolkit.web import accounts

    if args.action != "list" and not args.name:
        raise BadInput(f"accounts {args.action}: give the account's name")
    if args.action == "add" and not args.role:
        raise BadInput(f"--role: give the role of {args.name!r}: {', '.join(accounts.ROLES)}")
    if args.action == "role" and not args.role:
        raise BadInput("--role: give the new role")
    with open_register(args.register) as reg:
        if args.action == "list":
            rows = accounts.list_accounts(reg)
            text = "\n".join(f"{r['name']}  {r['role']}  {r['units']}  since {r['created'][:10]}" for r in rows)
            emit(args.json, {"accounts": rows, "register": reg.where}, text or "no accounts")
            return 0
        if args.action == "remove":
            done = accounts.remove(reg, args.name)
        elif args.action == "role":
            done = accounts.set_role(reg, args.name, args.role)
        else:
            if args.action == "add":
                accounts._check_name(args.name)
                accounts._check_role(args.role)
            password = _read_password(args)
            if args.action == "add":
                done = accounts.add(reg, args.name, args.role, password, units=args.units)
            else:
                done = accounts.set_password(reg, args.name, password)
        done["register"] = reg.where
        words = {"add": "added", "remove": "removed", "password": "has a new password", "role": "has a new role"}
        emit(args.json, done, f"account {done['name']} {words[args.action]} (register {reg.where})")
    return 0
