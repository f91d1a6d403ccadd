export interface KeptMessage {
	file: string;
	to: string[];
	from: string | null;
	subject: string;
	text: string;
	html: string;
}
export function readMailbox(dir: string): Promise<KeptMessage[]>;
