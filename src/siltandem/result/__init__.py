"""The main job end to end (run_stack) and its frozen Result, with each element's loss and penalty.
"""
