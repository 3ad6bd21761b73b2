import React from 'react';
import { MailboxScreen } from '../../components/mailbox-screen';
import { useOutbox } from '../../hooks/mailbox';

export default function Mailbox() {
  return <MailboxScreen state={useOutbox()} />;
}
