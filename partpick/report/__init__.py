"""What the user sees and takes away: terminal output, JSON report, order CSV, pictures."""
