"""The compute pipeline: the work queue of dirty spans and the worker."""
