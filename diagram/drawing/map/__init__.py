"""The graded map: vessels and lesions to scale, stents and grafts, change marks, margin labels."""
