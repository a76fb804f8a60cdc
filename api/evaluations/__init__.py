"""Purchase evaluations: the request and its resolution, the route, the CSV table and `rigbench evaluate`."""
