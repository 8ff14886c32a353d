"""Reading transcript files and tables into :class:`~talkthemes.ingest.model.Transcript`."""
