#!/usr/bin/python3
"""Writes the digits set bundled with scikit-learn (sklearn.datasets.load_digits, no download:
a copy of the test set of the UCI "Optical Recognition of Handwritten Digits" data, E. Alpaydin
and C. Kaynak, 1998) into one HDF5 file for unfurl:

  /images  1797 x 64 float32, 8 x 8 counts 0..16
  /labels  1797 int64, digit 0..9

Usage: digits_to_hdf5.py [--out FILE]
The output is written to a temporary file beside FILE and renamed when complete.
"""
import argparse
import os

import h5py
import numpy as np
from sklearn.datasets import load_digits


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--out", default="digits.h5", help="HDF5 file to write")
    args = parser.parse_args()
    digits = load_digits()
    if digits.data.shape != (1797, 64):
        raise SystemExit(f"load_digits returned shape {digits.data.shape}, expected (1797, 64)")
    tmp = args.out + ".partial"
    with h5py.File(tmp, "w") as f:
        f.attrs["source"] = "scikit-learn's bundled digits set (sklearn.datasets.load_digits)"
        # The description scikit-learn ships with the data names its origin and references.
        origin = [p for p in digits.DESCR.split("\n\n") if "copy of the test set" in p]
        f.attrs["description"] = " ".join(origin[0].split()) if origin else "see load_digits"
        f.attrs["citation"] = "E. Alpaydin, C. Kaynak (1998), Cascading Classifiers, Kybernetika"
        d = f.create_dataset("images", data=digits.data.astype(np.float32))
        d.attrs["description"] = "8 x 8 images, row-major, counts of on pixels 0..16"
        f.create_dataset("labels", data=digits.target.astype(np.int64))
    os.replace(tmp, args.out)
    print(f"wrote {args.out}: /images 1797 x 64 float32, /labels 1797 int64")


if __name__ == "__main__":
    main()
