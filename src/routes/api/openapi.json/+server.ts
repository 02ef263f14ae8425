import { json } from '@sveltejs/kit';
import { apiDocument } from '$server/openapi/document';
import type { RequestHandler } from './$types';

/** The API document (OpenAPI 3.1); the API page in the app shows the same. */
export const GET: RequestHandler = ({ url }) => json(apiDocument(url.origin));
