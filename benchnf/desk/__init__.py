"""The bench desk: benchnf in a browser (``benchnf desk``).

A local web application on top of the same measurement layer, writer and records store as the command
line: :mod:`.server` (HTTP and WebSocket handlers, the token and host guard), :mod:`.folder` (the one
folder it reads and writes), :mod:`.live` (the running spectrum), :mod:`.views` (results as tables and
plot data), :mod:`.guided` (a plan step by step), :mod:`.unitcheck` (a unit against a profile).
The browser code is ``static/`` (ours) and plotly.js (served from the plotly wheel).
"""
