"""The explorer as a user meets it: from a control change to the new image, in a real kernel.

Run: ``python benchmarks/bench_explorer.py [--repeat N]``. Starts a Jupyter kernel (ipykernel,
through jupyter_client, with the inline matplotlib backend a notebook uses), builds the explorer
of the bundled demo study in it, then plays the part of the browser: it sends the kernel the
widget message a moved slider sends (``comm_msg`` "update" of the energy-price slider's value)
and times how long the kernel takes to send the new picture back (a ``display_data`` with PNG
bytes, or a widget ``comm_msg`` carrying the image's bytes). The reference, measured in the same
run and in turns with the slider (A B A B ...), is the round trip of the same kind of message to
a widget that draws nothing (an ``IntText`` with no observer), answered when the kernel reports
itself idle again. Prints the medians, the ratio of the medians, the median of the ratios of
pairs and the kernel's own CPU time per update (less sensitive than wall time to other work on
a shared machine). Not a test: nothing fails on a slow machine. The time the browser then takes
to decode and paint the picture is not included (a few milliseconds for an image of this size).
"""

from __future__ import annotations

import argparse
import os
import statistics
import sys
import tempfile
import time

from jupyter_client.manager import KernelManager

SETUP = """
import statistics as _st
import time as _time
import ipywidgets as _w
import pipeopt
from pipeopt import SizingStudy, UpgradeStudy
explorer = pipeopt.explore({study}.demo(), debounce=0)
_cpu = []
_update_now = explorer.update_now
def _timed_update():  # the kernel's own CPU time of each update
    t0 = _time.process_time()
    _update_now()
    _cpu.append(_time.process_time() - t0)
explorer.update_now = _timed_update
display(explorer)
_idle = _w.IntText(0)
display(_idle)
print(explorer.controls["energy_price"].model_id, _idle.model_id,
      explorer.controls["energy_price"].value)
"""


def _drain(client, msg_id: str, timeout: float = 60.0) -> list[dict]:
    """IOPub messages of one request, up to its ``idle`` status."""
    out = []
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        msg = client.get_iopub_msg(timeout=timeout)
        if msg["parent_header"].get("msg_id") != msg_id:
            continue
        out.append(msg)
        if msg["msg_type"] == "status" and msg["content"]["execution_state"] == "idle":
            return out
    raise TimeoutError("the kernel did not finish the request")


def _execute(client, code: str) -> str:
    msg_id = client.execute(code)
    text = []
    for msg in _drain(client, msg_id, timeout=300):
        if msg["msg_type"] == "stream":
            text.append(msg["content"]["text"])
        if msg["msg_type"] == "error":
            raise RuntimeError("\n".join(msg["content"]["traceback"]))
    return "".join(text)


def _comm_update(client, comm_id: str, value) -> str:
    """Send what a browser sends when a slider moves; return the message id."""
    msg = client.session.msg("comm_msg", {
        "comm_id": comm_id,
        "data": {"method": "update", "state": {"value": value}, "buffer_paths": []}})
    client.shell_channel.send(msg)
    return msg["header"]["msg_id"]


def _is_image(msg: dict) -> bool:
    if msg["msg_type"] in ("display_data", "update_display_data"):
        return "image/png" in msg["content"].get("data", {})
    return msg["msg_type"] == "comm_msg" and bool(msg.get("buffers"))


def _time_slider(client, comm_id: str, value) -> float:
    t0 = time.perf_counter()
    msg_id = _comm_update(client, comm_id, value)
    seen = None
    deadline = time.monotonic() + 60
    while time.monotonic() < deadline:
        msg = client.get_iopub_msg(timeout=60)
        if msg["parent_header"].get("msg_id") != msg_id:
            continue
        if seen is None and _is_image(msg):
            seen = time.perf_counter() - t0
        if msg["msg_type"] == "status" and msg["content"]["execution_state"] == "idle":
            if seen is None:
                raise RuntimeError("the slider change produced no image")
            return seen
    raise TimeoutError("no answer from the kernel")


def _time_idle(client, comm_id: str, value) -> float:
    t0 = time.perf_counter()
    msg_id = _comm_update(client, comm_id, value)
    _drain(client, msg_id)
    return time.perf_counter() - t0


def measure(study: str = "SizingStudy", repeat: int = 21) -> dict[str, float]:
    """Median seconds from a slider change to the new image, and of the reference trip."""
    env = {k: v for k, v in os.environ.items() if k != "MPLBACKEND"}
    env["MPLBACKEND"] = "module://matplotlib_inline.backend_inline"  # as in a notebook
    with tempfile.TemporaryDirectory(prefix="pipeopt-bench-") as tmp:
        km = KernelManager(kernel_name="python3", transport="ipc",  # local sockets only
                           connection_file=os.path.join(tmp, "kernel.json"))
        km.start_kernel(env=env)
        client = km.client()
        client.start_channels()
        try:
            client.wait_for_ready(timeout=120)
            slider_id, idle_id, price = _execute(client, SETUP.format(study=study)).split()
            price = float(price)
            for k in range(3):  # warm-up: first draws load fonts and fill caches
                _time_slider(client, slider_id, price * (1.05 + 0.01 * k))
                _time_idle(client, idle_id, k + 1)
            slider, idle = [], []
            for k in range(repeat):
                slider.append(_time_slider(client, slider_id, price * (1.1 + 0.02 * (k % 10))))
                idle.append(_time_idle(client, idle_id, k + 10))
            kernel_cpu = float(_execute(client, f"print(_st.median(_cpu[-{repeat}:]))"))
        finally:
            client.stop_channels()
            km.shutdown_kernel(now=True)
    med_s, med_i = statistics.median(slider), statistics.median(idle)
    pairs = statistics.median(a / b for a, b in zip(slider, idle, strict=True))
    return {"slider": med_s, "idle": med_i, "ratio": med_s / med_i, "pair_ratio": pairs,
            "kernel_cpu": kernel_cpu, "min": min(slider), "max": max(slider)}


def main(repeat: int = 21) -> float:
    print(f"explorer in a real kernel (ipykernel, inline backend), median of {repeat}, "
          f"in turns with the reference")
    sizing = measure("SizingStudy", repeat)
    for name, r in (("sizing demo", sizing), ("upgrade demo", measure("UpgradeStudy", repeat))):
        print(f"  {name}: slider change -> new image {r['slider'] * 1e3:7.1f} ms "
              f"(min {r['min'] * 1e3:.1f}, max {r['max'] * 1e3:.1f}); reference round trip "
              f"{r['idle'] * 1e3:.1f} ms; ratio {r['ratio']:.1f} (pairs {r['pair_ratio']:.1f}); "
              f"CPU time of the update in the kernel {r['kernel_cpu'] * 1e3:.1f} ms")
    return sizing["slider"]


if __name__ == "__main__":
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=21)
    args = parser.parse_args()
    sys.exit(0 if main(args.repeat) > 0 else 1)
