"""Reference timing for the GP engine's benchmark (engines/gross-pitaevskii/_step_rate.ts): the same Strang
split-step (merged half steps: one local phase rotation and one forward/inverse FFT pair per step) written with
numpy.fft on complex128. Benchmark only, never a dependency of spindrift. Prints one line per size:
"n gamma best_ms median_ms", and "n fft best_ms median_ms" for a bare fft2/ifft2 pair."""
import sys
import time

import numpy as np


def main() -> None:
    sizes = [int(s) for s in sys.argv[1].split(",")]
    for n in sizes:
        for gamma in (0.0, 0.01):
            h, dt = 0.5, 0.02
            k = 2 * np.pi * np.fft.fftfreq(n, d=h)
            k2 = k[None, :] ** 2 + k[:, None] ** 2
            a, b = gamma / (1 + gamma**2), 1 / (1 + gamma**2)
            kin = np.exp(-(a + 1j * b) * 0.5 * k2 * dt)
            w = np.zeros((n, n))
            idx = np.arange(n * n, dtype=float).reshape(n, n)
            psi = (1 + 0.01 * np.sin(idx)).astype(np.complex128)

            def step(p):
                p = np.fft.ifft2(np.fft.fft2(p) * kin)
                rho = (p.real**2 + p.imag**2)
                if gamma == 0:
                    return p * np.exp(-1j * (w + rho - 1) * dt)
                lnq = -2 * a * (w - 1) * dt - np.log1p(rho * 2 * a * dt)
                return p * np.exp(0.5 * lnq + 0.5j * lnq / gamma)

            for _ in range(3):
                psi = step(psi)
            per = []
            reps = 40 if n <= 256 else 10
            for _ in range(7):
                t0 = time.perf_counter()
                for _ in range(reps):
                    psi = step(psi)
                per.append((time.perf_counter() - t0) / reps * 1e3)
            per.sort()
            print(f"{n} {gamma} {per[0]:.3f} {per[len(per) // 2]:.3f}", flush=True)
        a = (1 + 0.01 * np.sin(np.arange(n * n, dtype=float))).reshape(n, n).astype(np.complex128)
        per = []
        reps = 40 if n <= 256 else 10
        for _ in range(7):
            t0 = time.perf_counter()
            for _ in range(reps):
                a = np.fft.ifft2(np.fft.fft2(a))
            per.append((time.perf_counter() - t0) / reps * 1e3)
        per.sort()
        print(f"{n} fft {per[0]:.3f} {per[len(per) // 2]:.3f}", flush=True)


if __name__ == "__main__":
    main()
