"""Earlier rounds: the change since the previous brief, the round history, and `riskreport compare`."""
