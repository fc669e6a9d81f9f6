#!/usr/bin/python3
"""Converts Fashion-MNIST (Xiao, Rasul and Vollgraf 2017, "Fashion-MNIST: a Novel Image
Dataset for Benchmarking Machine Learning Algorithms", arXiv:1708.07747; MIT licence) from the
IDX files of Debian's dataset-fashion-mnist package into one HDF5 file for unfurl:

  /images  70000 x 784 float32, pixel values 0..255 as stored, train rows then test rows
  /labels  70000 int64, class 0..9, same order

The IDX layout (big-endian: a magic number whose third byte is the element type, 0x08 =
unsigned byte, and whose fourth byte is the number of dimensions, then one uint32 per
dimension, then the data) is the one the files' README describes.

Usage: fashion_mnist_to_hdf5.py [--source DIR] [--out FILE]
The output is written to a temporary file beside FILE and renamed when complete.
"""
import argparse
import gzip
import os
import sys

import h5py
import numpy as np

SOURCE = "/usr/share/datasets/fashion-mnist"
PARTS = [("train", 60000), ("t10k", 10000)]


def read_idx(path, want_dims):
    with gzip.open(path, "rb") as f:
        raw = f.read()
    if len(raw) < 4 or raw[0] != 0 or raw[1] != 0 or raw[2] != 0x08:
        sys.exit(f"{path}: not an unsigned-byte IDX file")
    dims = raw[3]
    if dims != want_dims:
        sys.exit(f"{path}: {dims} dimensions, expected {want_dims}")
    shape = tuple(int.from_bytes(raw[4 + 4 * i: 8 + 4 * i], "big") for i in range(dims))
    data = np.frombuffer(raw, dtype=np.uint8, offset=4 + 4 * dims)
    if data.size != int(np.prod(shape)):
        sys.exit(f"{path}: holds {data.size} values, its header promises {int(np.prod(shape))}")
    return data.reshape(shape)


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--source", default=SOURCE, help="folder of the IDX .gz files")
    parser.add_argument("--out", default="fashion-mnist.h5", help="HDF5 file to write")
    args = parser.parse_args()

    images, labels = [], []
    for prefix, count in PARTS:
        x = read_idx(os.path.join(args.source, f"{prefix}-images-idx3-ubyte.gz"), 3)
        y = read_idx(os.path.join(args.source, f"{prefix}-labels-idx1-ubyte.gz"), 1)
        if x.shape[0] != count or y.shape[0] != count or x.shape[1:] != (28, 28):
            sys.exit(f"{prefix}: unexpected shapes {x.shape} and {y.shape}")
        images.append(x.reshape(count, 784).astype(np.float32))
        labels.append(y.astype(np.int64))

    tmp = args.out + ".partial"
    with h5py.File(tmp, "w") as f:
        f.attrs["source"] = "Fashion-MNIST, Debian package dataset-fashion-mnist (" + args.source + ")"
        f.attrs["citation"] = ("Han Xiao, Kashif Rasul, Roland Vollgraf (2017), Fashion-MNIST: a "
                               "Novel Image Dataset for Benchmarking Machine Learning Algorithms, "
                               "arXiv:1708.07747")
        f.attrs["licence"] = "MIT (Expat), copyright 2017 Zalando SE"
        f.attrs["rows"] = "train rows 0:60000, then test rows 60000:70000"
        d = f.create_dataset("images", data=np.concatenate(images), chunks=(1000, 784),
                             compression="gzip", compression_opts=4, shuffle=True)
        d.attrs["description"] = "28 x 28 grey-level images, row-major, pixel values 0..255"
        l = f.create_dataset("labels", data=np.concatenate(labels))
        l.attrs["classes"] = ("T-shirt/top, Trouser, Pullover, Dress, Coat, Sandal, Shirt, "
                              "Sneaker, Bag, Ankle boot")
    os.replace(tmp, args.out)
    print(f"wrote {args.out}: /images 70000 x 784 float32, /labels 70000 int64")


if __name__ == "__main__":
    main()
