"""Words and numbers for people and scripts: terminal text, bars, JSON, and the one caution text."""
