"""Line searches: each evaluates along the ray until its conditions hold."""
