import nodemailer, { type Transporter } from 'nodemailer';
import { config } from './config';

export interface MailSettings {
	host: string;
	port: number;
	secure: boolean;
	user: string;
	password: string;
}

export function mailSettings(): MailSettings {
	const m = config.mail;
	return { host: m.host, port: m.port, secure: m.secure, user: m.user, password: m.password };
}

export function makeTransport(s: MailSettings = mailSettings()): Transporter {
	return nodemailer.createTransport({
		host: s.host,
		port: s.port,
		secure: s.secure,
		ignoreTLS: !s.secure,
		auth: s.user ? { user: s.user, pass: s.password } : undefined,
		connectionTimeout: 5_000,
		greetingTimeout: 5_000,
		socketTimeout: 10_000
	});
}

let transport: Transporter | null = null;
export function mailer(): Transporter {
	if (!transport) transport = makeTransport();
	return transport;
}
