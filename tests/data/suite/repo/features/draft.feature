Feature: Returns (being written)
  Returning a tool will be described here.
