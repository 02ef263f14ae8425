export class PeopleError extends Error {
	constructor(
		public code: 'conflict' | 'not_found' | 'invalid' | 'forbidden',
		message: string,
		public field?: string
	) {
		super(message);
	}
}
