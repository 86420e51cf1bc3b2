"""What the user reads: the text summary and the written outputs."""
