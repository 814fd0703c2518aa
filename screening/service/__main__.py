"""``python -m screening.service``: the same as ``heatscreen serve`` (for use before the CLI hook exists)."""
from __future__ import annotations

import argparse
import os


def main(argv=None) -> None:
    parser = argparse.ArgumentParser(prog="python -m screening.service",
                                     description="Run the heatscreen HTTP service (screening estimates only).")
    parser.add_argument("--host", default="127.0.0.1", help="address to bind (default 127.0.0.1)")
    parser.add_argument("--port", type=int, default=8000, help="port (default 8000)")
    parser.add_argument("--db", default=None, metavar="FILE",
                        help="run record: an SQLite file, or a SQLAlchemy URL (default heatscreen-runs.sqlite)")
    parser.add_argument("--token", default=os.environ.get("HEATSCREEN_TOKEN"), metavar="T",
                        help="API token every endpoint but /health wants (default: env HEATSCREEN_TOKEN)")
    args = parser.parse_args(argv)
    from screening.service.app import serve

    serve(args.host, args.port, args.db, args.token)


if __name__ == "__main__":
    main()
