"""Writes models/orbit_recorded_input.csv: an invented, recorded-looking acceleration log for
the orbit scenario (models/orbit_relative_motion.toml; inputs ax, ay, az in km/s^2).

The story (invented): a small inspection craft samples its accelerometers every 10 s over one
orbit of the target. It fires two along-track burns (a 90 s burn of 2.2 mm/s^2 after
periapsis and an 80 s braking burn later), one short radial trim and one cross-track trim;
between burns the log shows a small bias, slow drift and sensor noise. Deterministic (fixed
seed), numbers rounded to 4 significant digits like a logged quantity.

Usage: python3 bench/response_make_recorded_input.py > models/orbit_recorded_input.csv
"""
import math
import random

random.seed(8190)
STEP = 10.0
END = 8790.0  # past one period of the target (8782 s), so the model's [window] is covered


def burn(t, start, length, level, ramp=20.0):
    # Thrust rises and falls over RAMP seconds, as a logged valve would show.
    if t < start or t > start + length:
        return 0.0
    rise = min(1.0, (t - start) / ramp, (start + length - t) / ramp)
    return level * max(rise, 0.0)


def g4(x):
    return f"{x:.4g}"


print("t,ax,ay,az")
n = int(END / STEP) + 1
for k in range(n):
    t = k * STEP
    drift = 1.5e-8 * math.sin(2 * math.pi * t / 5200.0 + 0.4)
    ax = 3e-9 + drift + burn(t, 4100, 40, 8.0e-7) + random.gauss(0, 2.5e-9)
    ay = -2e-9 + burn(t, 600, 90, 2.2e-6) + burn(t, 5400, 80, -2.1e-6) + random.gauss(0, 2.5e-9)
    az = 1e-9 + 0.5 * drift + burn(t, 2500, 30, -5.0e-7) + random.gauss(0, 2.5e-9)
    print(f"{t:g},{g4(ax)},{g4(ay)},{g4(az)}")
