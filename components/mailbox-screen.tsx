import React from 'react';
import { Text, View } from 'react-native';
import { Page } from './shell';
import { Card, EmptyState, Notice } from './ui';
import { QueryView, type QueryState } from './query-state';
import { space, type } from './theme';
import { absoluteTime } from './format';
import type { OutboxMessage } from '../hooks/mailbox';
import { colors } from './theme';

const urlPattern = /(https?:\/\/[^\s]+)/g;

/** The text part, with its web addresses as links (invitations and password resets lead with one). */
function MailText({ text }: { text: string }) {
  const parts = text.split(urlPattern);
  return (
    <Text style={type.body}>
      {parts.map((part, i) =>
        i % 2 === 1 ? (
          <Text
            key={i}
            role="link"
            testID="mail-link"
            style={{ color: colors.ink, textDecorationLine: 'underline', wordBreak: 'break-all' } as object}
            {...({ href: part, hrefAttrs: { target: '_blank', rel: 'noopener noreferrer' } } as object)}
          >
            {part}
          </Text>
        ) : (
          part
        ),
      )}
    </Text>
  );
}

export function MailboxScreen({ state }: { state: QueryState<OutboxMessage[]> }) {
  return (
    <Page title="Mailbox" subtitle="Mail the console sent, as the local mail fake received it (not in production)">
      <Notice tone="slate" title="Development mailbox" detail="Nothing here left this machine. In production, mail goes to the SMTP server in the settings." />
      <QueryView state={state}>
        {(messages) =>
          messages.length === 0 ? (
            <EmptyState title="No mail yet" detail="Invitations, password-reset links and release trips will appear here." />
          ) : (
            <View style={{ gap: space.md }}>
              {messages.map((m, i) => (
                <Card key={`${m.sentAt}-${i}`}>
                  <Text style={type.heading}>{m.subject}</Text>
                  <Text style={type.small}>
                    To {m.to.join(', ')} · {absoluteTime(m.sentAt)}
                  </Text>
                  <MailText text={m.text} />
                </Card>
              ))}
            </View>
          )
        }
      </QueryView>
    </Page>
  );
}
