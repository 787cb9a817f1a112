# Outside oracle for the held-out Rusanov shallow-water step (src/swe.rs): the same scheme in Python floats (IEEE
# binary64, the same operations in the same order as the Rust f64 kernel) and in mpmath at 300 bits from the same
# doubles (G = 9.81, dt = 0.001, dx = 0.01 as the doubles the kernel sees); prints max |f64 - exact| per field.
import mpmath, sys
mpmath.mp.prec = 300
n, steps = 100, int(sys.argv[1]) if len(sys.argv) > 1 else 300
def run(num, sqrt):
    G, dt, dx, half = num(9.81), num(0.001), num(0.01), num(0.5)
    h = [num(2.0) if i < n // 2 else num(1.0) for i in range(n)]; hu = [num(0.0)] * n
    for s in range(steps):
        smax = max(abs(hu[i] / h[i]) + sqrt(G * h[i]) for i in range(n))
        def flux(i, j):
            ul, ur = hu[i] / h[i], hu[j] / h[j]
            f_h = half * (hu[i] + hu[j]) - half * smax * (h[j] - h[i])
            f_hu = half * (hu[i] * ul + half * G * h[i] * h[i] + hu[j] * ur + half * G * h[j] * h[j]) - half * smax * (hu[j] - hu[i])
            return f_h, f_hu
        hn, hun = list(h), list(hu)
        for i in range(1, n - 1):
            (lh, lhu), (rh, rhu) = flux(i - 1, i), flux(i, i + 1)
            hn[i] = h[i] - dt / dx * (rh - lh); hun[i] = hu[i] - dt / dx * (rhu - lhu)
        h, hu = hn, hun
    return h, hu
import math
(fh, fhu), (eh, ehu) = run(float, math.sqrt), run(mpmath.mpf, mpmath.sqrt)
print("h", float(max(abs(mpmath.mpf(a) - b) for a, b in zip(fh, eh))))
print("hu", float(max(abs(mpmath.mpf(a) - b) for a, b in zip(fhu, ehu))))
