"""Side panels of the window: the street properties and the key to the drawing."""
