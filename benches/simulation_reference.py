"""The assembly simulation an engineer would write with numpy, timed beside capstack.

    python3 benches/simulation_reference.py [path/to/capstack]

Ten independent normal contributors (sd 0.006 + 0.0005 i, sensitivities alternating -1/+1),
requirement +-0.1: numpy draws 2*10^7 assemblies in chunks of 10^6; the capstack binary
(default target/release/capstack) simulates 2*10^8 from an equivalent stack file. Prints
contributor-draws per second for both and the ratio.
"""
import json
import os
import subprocess
import sys
import tempfile
import time

import numpy as np

K = 10
A = np.array([1.0 if i % 2 else -1.0 for i in range(K)])
SD = np.array([0.006 + 0.0005 * i for i in range(K)])
LSL, USL = -0.1, 0.1


def numpy_simulation(samples, chunk=1_000_000, seed=1):
    rng = np.random.default_rng(seed)
    rejects = 0
    for _ in range(samples // chunk):
        y = (rng.standard_normal((chunk, K)) * SD) @ A
        rejects += np.count_nonzero((y < LSL) | (y > USL))
    return rejects / samples * 1e6


def stack_file(directory):
    lines = ['[requirement]\nname = "gap"\nlsl = -0.1\nusl = 0.1\n']
    for i in range(K):
        lines.append(
            f'[[contributor]]\nname = "c{i}"\nsensitivity = {A[i]}\nnominal = 0.0\n'
            f"tolerance = 0.03\nmean = 0.0\nsd = {SD[i]}\n"
        )
    path = os.path.join(directory, "ten.toml")
    with open(path, "w") as f:
        f.write("\n".join(lines))
    return path


def main():
    binary = sys.argv[1] if len(sys.argv) > 1 else "target/release/capstack"
    n_numpy = 20_000_000
    t = time.perf_counter()
    ppm = numpy_simulation(n_numpy)
    numpy_rate = n_numpy * K / (time.perf_counter() - t)
    print(f"numpy:    {numpy_rate / 1e6:8.1f} M contributor-draws/s ({ppm:.1f} ppm)")
    with tempfile.TemporaryDirectory() as d:
        path = stack_file(d)
        n = 200_000_000
        t = time.perf_counter()
        out = subprocess.run(
            [binary, "stack", path, "--samples", str(n), "--replicates", "0", "--format", "json"],
            check=True,
            capture_output=True,
        )
        rate = n * K / (time.perf_counter() - t)
        sim = json.loads(out.stdout)["simulation"]
    print(f"capstack: {rate / 1e6:8.1f} M contributor-draws/s ({sim['ppm']:.1f} ppm, whole run)")
    print(f"ratio:    {rate / numpy_rate:8.1f}x")


if __name__ == "__main__":
    main()
