"""The one render path and the validated settings object it takes."""
