"""``flowkit cache``: where compiled kernels live; ``--clear`` deletes them."""


def add(sub):
    p = sub.add_parser("cache", help="show or clear the folder of compiled kernels")
    p.add_argument("--clear", action="store_true", help="delete every generated module and compiled kernel")
    return p


def run(args) -> dict:
    from flowkit.kernels import cache_dir, clear_cache

    out = {"removed": clear_cache()} if args.clear else {}  # only a --clear removes anything
    folder = cache_dir()
    files = [p for p in folder.rglob("*") if p.is_file()] if folder.exists() else []
    return {"folder": str(folder), "files": len(files), "bytes": sum(p.stat().st_size for p in files), **out}


def human(result: dict) -> str:
    size = result["bytes"] / 2**20
    lines = [f"compiled kernels: {result['folder']} ({result['files']} files, {size:.1f} MiB)"]
    if "removed" in result:
        lines.insert(0, f"removed {result['removed']} files")
    else:
        lines.append("flowkit cache --clear deletes them (they are rebuilt on next use)")
    return "\n".join(lines)
