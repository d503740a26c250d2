"""Lists the object headers of an HDF5 file that straddle a 4 KiB boundary, with h5py.

kill -9 can cut a write() short only between 4 KiB-aligned page-cache pages, so an
object header inside one page is written whole or not at all; one that straddles a
boundary can be left half new, its checksum stale. Prints the file-space strategy
and page size, then one line per straddling header, then "straddling N".

usage: page_straddles.py FILE.h5
"""
import sys

import h5py

PAGE = 4096


def open_any(path):
    try:
        return h5py.File(path, "r")
    except OSError:
        return h5py.File(path, "r", swmr=True)  # a writer was killed


def main(path):
    f = open_any(path)
    plist = f.id.get_create_plist()
    print("strategy", plist.get_file_space_strategy()[0], "page", plist.get_file_space_page_size())
    headers = {"/": h5py.h5o.get_info(f.id)}

    def note(name):  # returns None, so visit() goes on
        headers[name] = h5py.h5o.get_info(f[name].id)

    f.visit(note)
    straddling = 0
    for name, info in sorted(headers.items()):
        start, size = info.addr, info.hdr.space.total
        if start // PAGE != (start + size - 1) // PAGE:
            print("straddles", name, start, size)
            straddling += 1
    print("headers", len(headers))
    print("straddling", straddling)


if __name__ == "__main__":
    main(sys.argv[1])
