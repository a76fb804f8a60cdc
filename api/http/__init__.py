"""HTTP plumbing: problem documents, content negotiation, ETags, body and rate limits, request logs, health."""
