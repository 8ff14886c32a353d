"""The preprocessing chain that turns stored transcripts into a prepared corpus."""
