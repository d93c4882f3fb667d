"""The peers' side of `npm run bench` (not a test): scikit-learn's and faiss's k-means on the vectors the bench writes.

Run by scripts/bench-peers.ts with Debian's python3, once per BLAS setting it compares (the environment as given,
OpenBLAS's variables unset, a kernel family forced); each run prints one JSON line, with the kernel family
threadpoolctl reports, so the report says which kernel ran.

  lloyd  X.npy C.npy ITERATIONS      scikit-learn Lloyd from the given codewords: wall and CPU seconds per iteration
  ladder X.npy BITS_MAX SEED         scikit-learn k-means++ (n_init=1) for every size 2^1..2^BITS_MAX: seconds and MSE
  faiss  X.npy C.npy ITERATIONS      faiss k-means from the given codewords: seconds per iteration
"""
import json
import sys
import time

import numpy as np


def kernel():
    from threadpoolctl import threadpool_info

    for info in threadpool_info():
        if info.get("internal_api") == "openblas":
            return {"blas": "openblas", "version": info.get("version"), "family": info.get("architecture"), "threads": info.get("num_threads")}
    infos = threadpool_info()
    return {"blas": infos[0].get("internal_api") if infos else None, "family": None}


def lloyd(x, c, iterations):
    from sklearn.cluster import KMeans

    km = KMeans(n_clusters=c.shape[0], algorithm="lloyd", n_init=1, init=c, tol=0, max_iter=iterations)
    t, p = time.perf_counter(), time.process_time()
    km.fit(x)
    wall, cpu = time.perf_counter() - t, time.process_time() - p
    return {"wall": wall / km.n_iter_, "cpu": cpu / km.n_iter_, "iterations": int(km.n_iter_), "mse": float(km.inertia_) / x.size}


def ladder(x, bits_max, seed):
    from sklearn.cluster import KMeans

    sizes = []
    total = 0.0
    for b in range(1, bits_max + 1):
        km = KMeans(n_clusters=2**b, algorithm="lloyd", n_init=1, init="k-means++", random_state=seed)
        t = time.perf_counter()
        km.fit(x)
        dt = time.perf_counter() - t
        total += dt
        sizes.append({"size": 2**b, "seconds": dt, "iterations": int(km.n_iter_), "mse": float(km.inertia_) / x.size})
    return {"total": total, "sizes": sizes}


def faiss_lloyd(x, c, iterations):
    import faiss

    d, k = x.shape[1], c.shape[0]
    # Every vector is used (faiss subsamples to max_points_per_centroid·K by default) and no empty-cell splitting
    # beyond its own rule; the figure is seconds per iteration of its exact (flat) search.
    km = faiss.Kmeans(d, k, niter=iterations, verbose=False, seed=1, max_points_per_centroid=x.shape[0], spherical=False)
    t = time.perf_counter()
    km.train(np.ascontiguousarray(x, dtype=np.float32), init_centroids=np.ascontiguousarray(c, dtype=np.float32))
    wall = time.perf_counter() - t
    return {"wall": wall / iterations, "iterations": iterations, "mse": float(km.obj[-1]) / x.size, "version": faiss.__version__}


def main():
    mode = sys.argv[1]
    x = np.load(sys.argv[2]).astype(np.float32, copy=False)
    if mode == "lloyd":
        out = lloyd(x, np.load(sys.argv[3]), int(sys.argv[4]))
    elif mode == "ladder":
        out = ladder(x, int(sys.argv[3]), int(sys.argv[4]))
    elif mode == "faiss":
        out = faiss_lloyd(x, np.load(sys.argv[3]), int(sys.argv[4]))
    else:
        raise SystemExit(f"unknown mode {mode}")
    out["kernel"] = kernel()
    print(json.dumps(out))


if __name__ == "__main__":
    main()
