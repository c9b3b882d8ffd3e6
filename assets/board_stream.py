"""An invented board for the README's front-end screenshot: a fictitious 10-bit, 5 V
microcontroller behind an in-amp gain of 1000 printing one integer per line (`\\r\\n`, no rate
line, about 250 Hz with loop jitter) into a pseudo-terminal. The signal is made up here: a spiky
73 bpm beat, 40 µV rms of 60 Hz pickup and slow breathing wander. Not a recording of anyone.

usage: board_stream.py SECONDS PATH_FILE   (writes the pseudo-terminal's path to PATH_FILE)
"""
import math
import os
import pty
import random
import sys
import time

seconds, path_file = float(sys.argv[1]), sys.argv[2]
master, slave = pty.openpty()
with open(path_file, "w") as f:
    f.write(os.ttyname(slave))
fs = 250.0
uv_per_count = 5.0 / 1024 / 1000 * 1e6
random.seed(3)
t0, k = time.time(), 0
while time.time() - t0 < seconds:
    wait = t0 + k / fs + random.random() * 0.003 - time.time()
    if wait > 0:
        time.sleep(wait)
    t = k / fs
    ph = (t * 73 / 60) % 1.0
    beat = (
        1100 * math.exp(-(((ph - 0.3) / 0.012) ** 2))
        - 150 * math.exp(-(((ph - 0.33) / 0.01) ** 2))
        + 250 * math.exp(-(((ph - 0.6) / 0.05) ** 2))
    )
    uv = beat + 40 * math.sqrt(2) * math.sin(2 * math.pi * 60 * t) + 80 * math.sin(2 * math.pi * 0.25 * t)
    count = max(0, min(1023, round(512 + uv / uv_per_count)))
    try:
        os.write(master, f"{count}\r\n".encode())
    except OSError:
        pass
    k += 1
