"""Who am I, and API tokens that can be revoked."""

from drf_spectacular.utils import extend_schema
from rest_framework import serializers
from rest_framework.response import Response
from rest_framework.views import APIView

from .models import Role
from .selectors import memberships_of
from .services import api_token_issue, api_token_revoke


class MembershipOutput(serializers.Serializer):
    organisation = serializers.CharField(help_text="The organisation's slug.")
    organisation_name = serializers.CharField()
    role = serializers.ChoiceField(choices=Role.choices)


class MeOutput(serializers.Serializer):
    username = serializers.CharField()
    full_name = serializers.CharField()
    unit_system = serializers.CharField()
    memberships = MembershipOutput(many=True)


class MeView(APIView):
    @extend_schema(responses=MeOutput)
    def get(self, request):
        user = request.user
        data = {
            "username": user.username,
            "full_name": user.get_full_name(),
            "unit_system": user.unit_system,
            "memberships": [
                {"organisation": m.organisation.slug, "organisation_name": m.organisation.name, "role": m.role}
                for m in memberships_of(user=user)
            ],
        }
        return Response(MeOutput(data).data)


class TokenOutput(serializers.Serializer):
    token = serializers.CharField()


class TokenView(APIView):
    @extend_schema(request=None, responses={201: TokenOutput})
    def post(self, request):
        """Issue an API token for the signed-in person (the same one until revoked)."""
        token = api_token_issue(user=request.user)
        return Response({"token": token.key}, status=201)

    @extend_schema(request=None, responses={204: None})
    def delete(self, request):
        """Revoke the person's API token."""
        api_token_revoke(user=request.user)
        return Response(status=204)
