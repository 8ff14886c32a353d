"""Imported by the server the chain's worker processes fork from (:mod:`.workers`): the
compiled scans are loaded and their tables built there once, so that every worker starts
with them instead of paying for them on its first batch."""

from talkthemes.prepare.scan import warm_up

warm_up()
