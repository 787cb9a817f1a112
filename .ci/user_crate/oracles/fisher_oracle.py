# Outside oracle for the held-out Fisher-KPP loop: the same scheme in Python floats (IEEE binary64, same operation
# order, so the same values as the Rust f64 run) and in mpmath at 300 bits; prints max |f64 - exact| at some steps.
import mpmath
mpmath.mp.prec = 300
n = 100
def run(num, steps):
    dx = num(1.0) / (num(n) - num(1.0))
    d, rho, dt = num('1e-3') if num is mpmath.mpf else 1e-3, num(2.0), num('0.01') if num is mpmath.mpf else 0.01
    u = [num(1.0) if float(i) * float(dx) < 0.1 else num(0.0) for i in range(n)]
    un = list(u); out = {}
    for s in range(1, steps + 1):
        for i in range(1, n - 1):
            lap = (u[i-1] - num(2.0) * u[i] + u[i+1]) / (dx * dx)
            un[i] = u[i] + dt * (d * lap + rho * u[i] * (num(1.0) - u[i]))
        un[0] = un[1]; un[n-1] = un[n-2]
        u, un = un, u
        if s in (100, 500, 1000, 2000): out[s] = list(u)
    return out
a = run(float, 2000); b = run(mpmath.mpf, 2000)
for s in sorted(a):
    print(s, float(max(abs(mpmath.mpf(x) - y) for x, y in zip(a[s], b[s]))))
