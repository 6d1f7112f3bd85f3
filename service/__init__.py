"""pourheat HTTP service: Flask app factory, blueprints, pydantic schemas and converters."""
