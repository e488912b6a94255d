"""One frame: eye rays, where they land, compositing in linear light, views and metrics."""
