"""The site stage: sea, seabed, surface, noise, equipment and the ocean physics they need."""
