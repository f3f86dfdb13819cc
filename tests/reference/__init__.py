"""Independent numerical references written apart from the production models (marker ``reference``)."""
