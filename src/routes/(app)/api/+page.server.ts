import { apiDocument } from '$server/openapi/document';
import type { PageServerLoad } from './$types';

export const load = (({ url }) => ({ doc: apiDocument(url.origin) })) satisfies PageServerLoad;
