"""gmsh resets SIGTERM to its default action when it starts; meshing must leave a process's own handler in place,
also when it meshes in a worker thread (the API's thread pool), or a service dies on SIGTERM instead of stopping."""

import json
import subprocess
import sys

from tests.helpers import TINY

SCRIPT = """
import json, os, signal, sys, threading, time
from wakeyard.solver import load, meshing
signal.signal(signal.SIGTERM, lambda *_: print("handled", flush=True))
spec = load(json.loads(sys.argv[1]))
worker = threading.Thread(target=meshing.counts, args=(spec,))
worker.start()
worker.join()
os.kill(os.getpid(), signal.SIGTERM)
time.sleep(0.2)
print("alive", flush=True)
"""


def test_a_process_keeps_its_sigterm_handler_after_meshing_in_a_thread() -> None:
    done = subprocess.run([sys.executable, "-c", SCRIPT, json.dumps(TINY)], capture_output=True, text=True, timeout=60)
    assert done.returncode == 0, done.stderr
    assert done.stdout.split() == ["handled", "alive"]
