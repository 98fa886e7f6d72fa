"""Imports the installed module (PYTHONPATH = the install's dist-packages) and prints where it came from and
the Landé factor of 2P3/2 with g_s = 2 (4/3, textbook LS formula) for consumer_check.cmake."""
import zeeline

print(zeeline.__file__)
print(repr(zeeline.lande("2P3/2", gs=2)))
