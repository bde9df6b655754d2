"""The demo: a whole round of the real bot against the local Bot API stand-in, no token needed.

One invented flat (:mod:`bot.demo.flat`) and its simulated flatmates (:mod:`bot.demo.flatmates`)
serve the demo and the adapter tests alike.
"""
