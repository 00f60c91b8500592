import factory

from accounts.models import Membership, Organisation, Role, User


class OrganisationFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = Organisation

    name = factory.Sequence(lambda n: f"Testing Contractor {n}")
    slug = factory.Sequence(lambda n: f"org-{n}")
    kind = Organisation.Kind.CONTRACTOR


class UserFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = User
        skip_postgeneration_save = True

    username = factory.Sequence(lambda n: f"person{n}")
    first_name = "Test"
    last_name = factory.Sequence(lambda n: f"Person{n}")
    email = factory.LazyAttribute(lambda o: f"{o.username}@example.invalid")
    password = factory.PostGenerationMethodCall("set_password", "pass-for-tests-123")

    @factory.post_generation
    def _save(obj, create, extracted, **kwargs):
        if create:
            obj.save()


class MembershipFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = Membership

    user = factory.SubFactory(UserFactory)
    organisation = factory.SubFactory(OrganisationFactory)
    role = Role.TECHNICIAN


def make_person(*, organisation: Organisation, role: str, **user_fields) -> User:
    user = UserFactory(**user_fields)
    MembershipFactory(user=user, organisation=organisation, role=role)
    return user
