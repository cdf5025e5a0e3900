"""What Bandsmith writes and reads: session files and the exports of one candidate."""
