"""Run the dashboard as its own process against a lostwork server.

    python -m dashboard --api http://plant-server:8000 --key KEY [--host 127.0.0.1 --port 8050]

The key may instead come from the environment variable LOSTWORK_DASHBOARD_API_KEY, which
keeps it out of the process list.
"""

from __future__ import annotations

import argparse
import os
import sys

import uvicorn

from dashboard.app import KEY_ENV, create_dash


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(prog="python -m dashboard", description=__doc__.split("\n")[0])
    parser.add_argument("--api", required=True, help="root URL of the lostwork server")
    parser.add_argument("--key", default=None, help=f"API key (default: ${KEY_ENV})")
    parser.add_argument("--host", default="127.0.0.1", help="address to listen on")
    parser.add_argument("--port", type=int, default=8050, help="port to listen on")
    args = parser.parse_args(argv)
    key = args.key or os.environ.get(KEY_ENV)
    if not key:
        print(
            f"warning: no API key (--key or ${KEY_ENV}); the server will refuse reads",
            file=sys.stderr,
        )
    app = create_dash(api_base_url=args.api, api_key=key)
    print(f"lostwork dashboard on http://{args.host}:{args.port}/ reading {args.api}")
    uvicorn.run(app.server, host=args.host, port=args.port, log_level="warning")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
