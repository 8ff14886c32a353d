"""What a call is, shared by the readers and the store: the transcript model, identity rules."""
