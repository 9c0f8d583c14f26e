"""``flowkit cache``: where compiled kernels live; ``--clear`` deletes them."""


def add(sub):
    p = sub.add_parser("cache", help="show or clear the folder of compiled kernels")
    p.add_argument("--clear", action="store_true", help="delete every generated module and compiled kernel")
    return p


def run(args) -> dict:
    from flowkit.kernels import cache_dir, clear_cache

    removed = clear_cache() if args.clear else 0
    folder = cache_dir()
    files = [p for p in folder.rglob("*") if p.is_file()] if folder.exists() else []
    return {"folder": str(folder), "files": len(files), "removed": removed,
            "bytes": sum(p.stat().st_size for p in files)}
