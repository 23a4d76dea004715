"""``balancer serve``: the whole job in a browser on the user's own machine.

A thin layer over :mod:`balancer.api`: the server reads the schedule, runs the check and the
balance, draws the charts as SVG and writes the workbook, PDF and JSON; the page only shows
what the server computed. Nothing leaves the machine: the page and its assets are package
data, and the server listens on 127.0.0.1 unless told otherwise.

Each browser tab gets its own session (an unguessable id the page sends with every request);
uploads live in a private temporary folder deleted when the server stops. A balance runs in a
worker process with a job id; cancelling a job terminates that process and discards whatever
it had found.
"""
