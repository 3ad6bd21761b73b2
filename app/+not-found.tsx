import React from 'react';
import { Link } from 'expo-router';
import { Text, View } from 'react-native';
import { colors, linkTarget, space, type } from '../components/theme';

export default function NotFound() {
  return (
    <View style={{ flex: 1, backgroundColor: colors.paper, alignItems: 'center', justifyContent: 'center', padding: space.xl, gap: space.md }}>
      <Text role="heading" aria-level={1} style={type.title}>
        Page not found
      </Text>
      <Text style={[type.body, { textAlign: 'center' }]}>This address does not lead anywhere in Heliodor. Check the link, or go back to the overview.</Text>
      <Link href="/" style={[type.body, linkTarget, { alignSelf: 'center', textDecorationLine: 'underline', fontFamily: 'IBMPlexSans_600SemiBold' }]}>
        Back to the overview
      </Link>
    </View>
  );
}
