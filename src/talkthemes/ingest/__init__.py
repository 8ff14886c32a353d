"""Reading transcript files and tables into :class:`~talkthemes.calls.model.Transcript`."""
