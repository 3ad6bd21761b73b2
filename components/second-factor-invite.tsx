// The demo keeps one-step sign-in for its people; admins and release engineers are invited (not made)
// to set up the second factor production will require of them.
import React from 'react';
import { Text, View } from 'react-native';
import { Link } from 'expo-router';
import { Notice } from './ui';
import { space, type } from './theme';

export function SecondFactorInvite() {
  return (
    <View style={{ marginBottom: space.lg }} testID="second-factor-invite">
      <Notice tone="amber" title="Set up a second factor" detail="Your role can ship firmware or signing keys. Production requires a code from your phone after the password; set it up now so nothing changes for you later.">
        <Link href={'/account' as never} style={{ minHeight: 44, justifyContent: 'center', paddingVertical: space.sm } as object}>
          <Text style={[type.body, { textDecorationLine: 'underline' }]}>Set it up on your account page</Text>
        </Link>
      </Notice>
    </View>
  );
}
