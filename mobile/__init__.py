"""bracewalk tablet app and command line. Kivy is imported only by the screen modules."""
