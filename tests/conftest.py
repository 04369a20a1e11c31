import os
import sys

# tests import the numpy reference implementation as a plain module
sys.path.insert(0, os.path.dirname(__file__))
