"""CI: the installed wheel's desk starts and serves its page, its script and plotly.js from the wheel."""

import subprocess
import sys
import tempfile
import urllib.request

with tempfile.TemporaryDirectory() as folder:
    desk = subprocess.Popen([sys.argv[1], "desk", "--folder", folder, "--port", "0", "--no-browser"],
                            stdout=subprocess.PIPE, text=True)
    try:
        url = desk.stdout.readline().split(" on ", 1)[1].strip()
        for path, marker in (("", b"benchnf desk"), ("static/desk.js", b"benchnf desk"),
                             ("vendor/plotly.min.js", b"plotly.js")):
            with urllib.request.urlopen(url + path, timeout=30) as r:
                assert marker in r.read(4096), path
    finally:
        desk.terminate()
        desk.wait(timeout=30)
print(f"ci: the installed wheel's desk served its page and scripts at {url}")
