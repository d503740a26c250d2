"""Rewrites a run file from `credence train` with small gzip chunks (h5py), so a real run
fits a fuzz seed: the writer's 4096-row chunks make even a tiny run about 1.5 MB.
Usage: /usr/bin/python3 compact_run_seed.py RUN.h5 SEED.h5"""
import sys

import h5py


def copy_attrs(src, dst):
    for name, value in src.attrs.items():
        dst.attrs[name] = value


def copy_group(src, dst):
    copy_attrs(src, dst)
    for name, item in src.items():
        if isinstance(item, h5py.Group):
            copy_group(item, dst.create_group(name))
        else:
            data = item[()]
            kwargs = {}
            if item.chunks is not None and item.size > 0:
                kwargs = dict(chunks=tuple(max(1, min(n, 64)) for n in item.shape) or None,
                              maxshape=item.maxshape, compression="gzip", compression_opts=9)
            out = dst.create_dataset(name, data=data, dtype=item.dtype, **kwargs)
            copy_attrs(item, out)


with h5py.File(sys.argv[1], "r") as src, h5py.File(sys.argv[2], "w", libver="latest") as dst:
    copy_group(src, dst)
